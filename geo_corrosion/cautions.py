"""The cautions printed on every report, map, drawing and schedule.

Wording is the project's own, informed by the sources cited in each (keys of
:mod:`geo_corrosion.bibliography`).
"""

from __future__ import annotations

__all__ = ["CAUTIONS", "SHORT_CAUTION", "QUANTITIES_CAUTION"]

CAUTIONS: tuple[str, ...] = (
    "Survey data only, not a structural assessment. Evaluation and repair design must be "
    "performed or supervised by a licensed professional engineer experienced in concrete repair "
    "and corrosion, interpreting these results with chloride, carbonation, cover, delamination "
    "and visual data [ASTM-C876-22a §4.8].",
    "Half-cell classes indicate the probability of corrosion at the time of measurement, not its "
    "rate or the remaining bar section. They are unreliable where cover exceeds 75 mm, on dry, "
    "coated or sealed surfaces, with epoxy-coated or galvanized bars, and in cathodically "
    "protected or stray-current areas [ASTM-C876-15 §1.2, §4.2].",
    "Resistivity and corrosion-rate classes are indicative; they depend on cement type and "
    "temperature and do not measure chloride contamination. Laboratory permeability classes "
    "[AASHTO-T358-15 scope] do not apply to field readings.",
    "Repair areas and quantities are estimates for bidding. Final removal limits are set in the "
    "field by sounding, during and after removal, under the engineer's direction "
    "[UFGS-03931].",
    "Never saw-cut or chip into prestressing or post-tensioning tendons, and do not cut "
    "reinforcement: locate tendons and bars first; saw cuts must not be deeper than the steel.",
    "Evaluate the need for temporary shoring before removal; overhead spalls are a falling-debris "
    "hazard over occupied areas.",
    "Bars with more than 25 % section loss (or adjacent bars with more than 20 %) need an "
    "engineering decision on replacement or supplementing.",
    "Do not sound frozen concrete [ASTM-D4580-23 §1.1]; keep traffic control in place on "
    "active decks; "
    "follow electrical safety when drilling to connect to the reinforcement.",
    "Local building codes and the owner's or agency's specifications govern over anything shown "
    "here.",
)

SHORT_CAUTION = (
    "Survey data, not a structural assessment; a licensed engineer decides. Local codes and "
    "agency specifications govern. Never cut into tendons or reinforcement."
)

#: The caution printed under every schedule of quantities (one of :data:`CAUTIONS`).
QUANTITIES_CAUTION = CAUTIONS[3]
