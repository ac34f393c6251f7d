"""The project's bibliography: every published source geo_corrosion cites, held once as data.

Citation form
-------------
Everywhere in the package, the docs, the sample sites and the tests a source is cited in
square brackets by its key in :data:`SOURCES`, followed by the clause, table or equation::

    [ASTM-C876-22a §5.1.1.2]
    [RILEM-TC154-2003 Table 1, from memory]
    [Stern-Geary-1957; Andrade-Alonso-2004]

Several citations in one pair of brackets are separated by ``"; "``.  ``from memory``
after the place marks a value recalled from the source and not read again, and ``to
confirm`` after the brackets a value seen only in a summary of the source; each such
value is listed in :data:`ASSUMPTIONS_TO_CONFIRM`.  A value with no published source
says ``common practice`` in plain words, without brackets (and is listed there too);
a value calculated from cited constants says ``derived``.
:func:`cite` writes the same citation for a reader (``"ASTM C876-22a, §5.1.1.2"``);
``docs/bibliography.md`` is :func:`bibliography_markdown`.

A firm's or vendor's web page is never a source: where a value was only seen on one,
the standard, handbook or paper behind it is cited and the value is listed in
:data:`ASSUMPTIONS_TO_CONFIRM`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

__all__ = [
    "Source",
    "SOURCES",
    "ASSUMPTIONS_TO_CONFIRM",
    "CITATION_RE",
    "cite",
    "cited_keys",
    "bibliography_markdown",
    "assumptions_markdown",
]


@dataclass(frozen=True)
class Source:
    """One published source.

    Attributes
    ----------
    key : str
        Citation key, e.g. ``"ASTM-C876-22a"`` or ``"Stern-Geary-1957"``.
    authors : str
        Authors, or the issuing body of a standard or guide.
    title : str
        Title as published.
    year : int or None
        Year of publication (None where the edition is not recorded).
    designation : str
        Designation or edition of a standard, guide or book; journal, volume and pages
        of a paper.
    short : str
        Short form for a reader, used by :func:`cite` (``"ASTM C876-22a"``).
    note : str
        What the project took from it and how (read, or from memory), or what to check.
    """

    key: str
    authors: str
    title: str
    year: int | None
    designation: str
    short: str
    note: str = ""


_M = "from memory"

_ALL: tuple[Source, ...] = (
    # ---------------------------------------------------------------- half-cell potentials
    Source("ASTM-C876-91", "ASTM International",
           "Standard Test Method for Half-Cell Potentials of Uncoated Reinforcing Steel in "
           "Concrete", 1991, "ASTM C876-91 (reapproved 1999)", "ASTM C876-91",
           "Used from memory: §5.1 (grid, 150 mV between adjacent readings), §6.2 (contour "
           "interval), §6.3 (cumulative frequency), Appendix X1 (-200/-350 mV criteria), "
           "§4.1.1.2 (CSE -0.316 V vs hydrogen); see the assumptions to confirm."),
    Source("ASTM-C876-15", "ASTM International (Committee G01, Subcommittee G01.14)",
           "Standard Test Method for Corrosion Potentials of Uncoated Reinforcing Steel in "
           "Concrete", 2015, "ASTM C876-15", "ASTM C876-15",
           "Scope limits §1.2 and §4.2 read in excerpts (cover over 75 mm, dry, coated or "
           "sealed surfaces)."),
    Source("ASTM-C876-22a", "ASTM International (Committee G01, Subcommittee G01.14)",
           "Standard Test Method for Corrosion Potentials of Uncoated Reinforcing Steel in "
           "Concrete", 2022, "ASTM C876-22a", "ASTM C876-22a",
           "Read in excerpts: §4.7 (temperature may be neglected within 22.2 ± 5.5 °C), §4.8 "
           "(interpretation by experienced engineers), §5.1.1.2 (CSE 0.0005 V/°F, 0-49 °C)."),
    Source("ASTM-G3", "ASTM International",
           "Standard Practice for Conventions Applicable to Electrochemical Measurements in "
           "Corrosion Testing", None, "ASTM G3", "ASTM G3",
           "§4.1 sign convention read in an excerpt; edition not recorded."),
    Source("RILEM-TC154-2003",
           "B. Elsener, C. Andrade, J. Gulikers, R. Polder, M. Raupach (RILEM TC 154-EMC)",
           "Half-cell potential measurements - Potential mapping on reinforced concrete "
           "structures", 2003, "Materials and Structures 36 (2003) 461-471",
           "RILEM TC 154-EMC (2003)",
           "Front page read; grid sizes, the Table 1 potential ranges and the continuity "
           "limits are from memory."),
    Source("Gulikers-Elsener-2008", "J. Gulikers, B. Elsener",
           "Statistical interpretation of results of potential mapping on reinforced concrete "
           "structures", 2008, "SACoMaTiS 2008, RILEM Proceedings PRO, pp. 221-230",
           "Gulikers & Elsener (2008)", "Abstract read."),
    Source("Gu-Beaudoin-1998", "P. Gu, J.J. Beaudoin (National Research Council Canada)",
           "Obtaining effective half-cell potential measurements in reinforced concrete "
           "structures", 1998, "Construction Technology Update No. 18, NRC Canada",
           "Gu & Beaudoin (1998)", "Sign convention (steel to the positive terminal) read."),
    # ---------------------------------------------------------------- reference electrodes
    Source("Ives-Janz-1961", "D.J.G. Ives, G.J. Janz (eds.)",
           "Reference Electrodes: Theory and Practice", 1961, "Academic Press, New York",
           "Ives & Janz (1961)",
           "Named by ASTM C876 for converting other electrodes to the CSE; not read here."),
    Source("IJCorros-2010", "authors to be added",
           "Reference electrodes in metal corrosion", 2010,
           "International Journal of Corrosion (Hindawi), vol. 2010, Table 2",
           "Int. J. Corrosion (2010)",
           "Table 2 read: CSE 0.316 V, SCE 0.241 V, Ag/AgCl (saturated KCl) 0.197 V vs SHE. "
           "Authors and article number to be added."),
    Source("Stern-Sadoway-2011", "Stern, Sadoway, Tester",
           "Copper sulfate reference electrode", 2011,
           "Journal of Electroanalytical Chemistry 659 (2011) 143-150",
           "Stern, Sadoway & Tester (2011)",
           "Abstract read: 317 mV vs NHE at 25 °C, 0.17 mV/°C (the field value 0.9 mV/°C of "
           "ASTM C876 is the one used)."),
    # ---------------------------------------------------------------- resistivity
    Source("Wenner-1916", "F. Wenner", "A method of measuring earth resistivity", 1916,
           "Bulletin of the Bureau of Standards 12 (1916) 469-478", "Wenner (1916)",
           "The origin of rho = 2 pi a V / I; bibliographic details from memory (the "
           "formula is checked by the tests)."),
    Source("RILEM-TC154-2000", "R.B. Polder et al. (RILEM TC 154-EMC)",
           "Test methods for on site measurement of resistivity of concrete", 2000,
           "Materials and Structures 33 (2000) 603-611", "RILEM TC 154-EMC (2000)",
           "The formal recommendation; volume and pages from memory, resistivity classes "
           "from memory."),
    Source("Polder-2001", "R.B. Polder",
           "Test methods for on site measurement of resistivity of concrete - a RILEM TC-154 "
           "technical recommendation", 2001,
           "Construction and Building Materials 15 (2001) 125-131", "Polder (2001)",
           "Abstract read (one-, two- and four-electrode methods, reference values); the "
           "class table, 50 mm spacing and about 3 %/K are from memory."),
    Source("Gowers-Millard-1999", "K.R. Gowers, S.G. Millard",
           "Measurement of concrete resistivity for assessment of corrosion severity of steel "
           "reinforcement", 1999, "ACI Materials Journal 96(5) (1999) 536-541",
           "Gowers & Millard (1999)", "Geometry rules (edge distance, thickness, bars) from "
           "memory."),
    Source("Morris-Moreno-1996", "W. Morris, E.I. Moreno, A.A. Sagüés",
           "Practical evaluation of resistivity of concrete in test cylinders using a Wenner "
           "array probe", 1996, "Cement and Concrete Research 26(12) (1996) 1779-1787",
           "Morris, Moreno & Sagüés (1996)",
           "Cylinder correction factors, from memory; not used."),
    Source("Robles-Yee-2021", "Robles, Yee, Kee",
           "Effect of the geometrical constraints to the Wenner four-point electrical "
           "resistivity test of reinforced concrete slabs", 2021, "Sensors 21 (2021) 4622",
           "Robles, Yee & Kee (2021)",
           "Abstract read: a thin element reads too high, as the derived thickness factor."),
    Source("Coyle-Spragg-2019",
           "A.T. Coyle, R.P. Spragg, P. Suraneni, A.N. Amirkhanian, M. Tsui-Chang, W.J. Weiss",
           "Activation energy of conduction for use in temperature corrections on electrical "
           "measurements of concrete", 2019, "Advances in Civil Engineering Materials",
           "Coyle et al. (2019)",
           "Abstract read (E_a 9 to 39 kJ/mol; pore solution 13.9 kJ/mol; saturated 15.8 "
           "kJ/mol). Journal, year and pages from memory: confirm."),
    Source("Castellote-Andrade-2002", "M. Castellote, C. Andrade, M.C. Alonso",
           "Standardization, to a reference of 25 °C, of electrical resistivity for mortars "
           "and concretes in saturated or isolated conditions", 2002,
           "ACI Materials Journal 99(2) (2002) 119-128", "Castellote, Andrade & Alonso (2002)",
           "Abstract read; an alternative (quadratic) temperature correction, not used."),
    Source("AASHTO-T358-15", "AASHTO",
           "Standard Method of Test for Surface Resistivity Indication of Concrete's Ability "
           "to Resist Chloride Ion Penetration", 2015, "AASHTO T 358-15", "AASHTO T 358-15",
           "Scope read (2015 and 2022 editions): a laboratory test on water-saturated "
           "cylinders. The Table 1 class limits are from memory."),
    Source("EN-12390-19-2023", "CEN",
           "Testing hardened concrete - Part 19: Determination of electrical resistivity",
           2023, "EN 12390-19:2023", "EN 12390-19:2023",
           "Scope read; excludes corrosion assessment of existing structures. Not used."),
    Source("Broomfield-2007", "J.P. Broomfield",
           "Corrosion of Steel in Concrete: Understanding, Investigation and Repair", 2007,
           "2nd ed., Taylor & Francis", "Broomfield (2007)",
           "Gives the Langford & Broomfield (1987) resistivity classes; from memory."),
    Source("Alonso-Andrade-1988", "C. Alonso, C. Andrade, J.A. González",
           "Relation between resistivity and corrosion rate of reinforcements in carbonated "
           "mortar made with several cement types", 1988,
           "Cement and Concrete Research 18 (1988) 687-698", "Alonso, Andrade & González (1988)",
           "i_corr about 26-30 / rho; from memory, low confidence. Title and journal from "
           "memory: confirm."),
    # ---------------------------------------------------------------- corrosion rate
    Source("Stern-Geary-1957", "M. Stern, A.L. Geary",
           "Electrochemical polarization I. A theoretical analysis of the shape of polarization "
           "curves", 1957, "Journal of the Electrochemical Society 104(1) (1957) 56-63",
           "Stern & Geary (1957)", "The original of i_corr = B / R_p; not read here."),
    Source("Roberge-2008", "P.R. Roberge", "Corrosion Engineering: Principles and Practice",
           2008, "McGraw-Hill", "Roberge (2008)", "Ch. 5, eqs. 5.22-5.23 (B from the Tafel "
           "slopes) read."),
    Source("Andrade-Gonzalez-1978", "C. Andrade, J.A. González",
           "Quantitative measurements of corrosion rate of reinforcing steels embedded in "
           "concrete using polarization resistance measurements", 1978,
           "Werkstoffe und Korrosion 29 (1978) 515-519", "Andrade & González (1978)",
           "B = 26 mV active, 52 mV passive, from memory. Title and journal from memory: "
           "confirm."),
    Source("Andrade-Alonso-2004", "C. Andrade, C. Alonso et al. (RILEM TC 154-EMC)",
           "Test methods for on-site corrosion rate measurement of steel reinforcement in "
           "concrete by means of the polarization resistance method", 2004,
           "Materials and Structures 37 (2004) 623-643", "RILEM TC 154-EMC (2004)",
           "Draft front page read. The rate levels (high confidence), the 20 mV linear range, "
           "A = pi d L, R_p = dE/dI - R_ohm and 0.0116 mm/yr per uA/cm2 are from memory."),
    Source("Andrade-Alonso-1996", "C. Andrade, C. Alonso",
           "Corrosion rate monitoring in the laboratory and on-site", 1996,
           "Construction and Building Materials 10(5) (1996) 315-328",
           "Andrade & Alonso (1996)",
           "Abstract read: confinement of the current, levels of risk."),
    Source("Clear-1989", "K.C. Clear",
           "Measuring rate of corrosion of steel in field concrete structures", 1989,
           "Transportation Research Record 1211 (1989) 28-37", "Clear (1989)",
           "Three-electrode (3LP) levels, from memory. Title and journal from memory: "
           "confirm."),
    Source("ASTM-G59", "ASTM International",
           "Standard Test Method for Conducting Potentiodynamic Polarization Resistance "
           "Measurements", None, "ASTM G59", "ASTM G59",
           "Known from an abstract: sweep 0.6 V/h, R_p as the slope at E_corr. Edition not "
           "recorded."),
    Source("Newton-Sykes-1988", "C.J. Newton, J.M. Sykes",
           "A galvanostatic pulse technique for investigation of steel corrosion in concrete",
           1988, "Corrosion Science 28(11) (1988) 1051-1074", "Newton & Sykes (1988)",
           "Randles model of the pulse response, from memory. Title and journal from memory: "
           "confirm."),
    Source("So-Millard-2007", "So, Millard",
           "Assessment of corrosion rate of reinforcing steel in concrete using galvanostatic "
           "pulse transient technique", 2007,
           "International Journal of Concrete Structures and Materials 1(1) (2007) 83-88",
           "So & Millard (2007)", "Abstract read (pulse 5-180 s). Title from memory: confirm."),
    # ---------------------------------------------------------------- propagation
    Source("Gonzalez-Andrade-1995", "J.A. González, C. Andrade, C. Alonso, S. Feliu",
           "Comparison of rates of general corrosion and maximum pitting penetration on "
           "concrete embedded steel reinforcement", 1995,
           "Cement and Concrete Research 25(2) (1995) 257-264", "González et al. (1995)",
           "Pitting factor 4-8, from memory. Title from memory: confirm."),
    Source("Val-Melchers-1997", "D.V. Val, R.E. Melchers",
           "Reliability of deteriorating RC slab bridges", 1997,
           "Journal of Structural Engineering (ASCE) 123 (1997)", "Val & Melchers (1997)",
           "Hemispherical pit area, from memory. Title, issue and pages from memory: "
           "confirm."),
    Source("Alonso-Andrade-1998", "C. Alonso, C. Andrade, J. Rodriguez, J.M. Diez",
           "Factors controlling cracking of concrete affected by reinforcement corrosion",
           1998, "Materials and Structures 31 (1998) 435-441", "Alonso et al. (1998)",
           "x_crit = 7.53 + 9.32 c/phi um, from memory."),
    # ---------------------------------------------------------------- cover
    Source("ACI-318-19", "ACI Committee 318",
           "Building Code Requirements for Structural Concrete", 2019, "ACI 318-19",
           "ACI 318-19",
           "Cover table 20.5.1.3.1 read; the placement tolerance (§26.6.2.1) is from memory. "
           "Edition taken from the table number."),
    Source("ACI-362.1R-12", "ACI Committee 362",
           "Guide for the Design and Construction of Durable Concrete Parking Structures",
           2012, "ACI 362.1R-12", "ACI 362.1R-12",
           "Contents read; the cover table is from memory. Not used."),
    Source("ACI-222R-19", "ACI Committee 222",
           "Guide to Protection of Reinforcing Steel in Concrete Against Corrosion", 2019,
           "ACI 222R-19", "ACI 222R-19",
           "From memory: half-cell surveys need an electrical connection to reinforcement "
           "that is continuous; mats separated by joints are tested for continuity and "
           "connected separately. Not read again."),
    Source("ACI-224.3R-95", "ACI Committee 224",
           "Joints in Concrete Construction", 1995, "ACI 224.3R-95 (reapproved 2013)",
           "ACI 224.3R-95",
           "From memory: expansion and isolation joints separate members (no bar crosses "
           "them); construction joints carry the bars through; contraction (control) joints "
           "may cut part of the bars. Not read again."),
    Source("ACI-228.2R-13", "ACI Committee 228",
           "Report on Nondestructive Test Methods for Evaluation of Concrete in Structures",
           2013, "ACI 228.2R-13", "ACI 228.2R-13", "Abstract and front matter read."),
    Source("BS-1881-204-1988", "British Standards Institution",
           "Testing concrete - Part 204: Recommendations on the use of electromagnetic "
           "covermeters", 1988, "BS 1881-204:1988", "BS 1881-204:1988",
           "The ±5 % or ±2 mm laboratory accuracy was seen only as quoted by others. Not used."),
    # ---------------------------------------------------------------- sounding and repair
    Source("ASTM-D4580-23", "ASTM International",
           "Standard Practice for Measuring Delaminations in Concrete Bridge Decks by Sounding",
           2023, "ASTM D4580-23", "ASTM D4580-23",
           "Scope read (procedures A, B, C; not on frozen concrete; not under asphalt "
           "overlays)."),
    Source("ICRI-310.1R-2008", "International Concrete Repair Institute",
           "Guide for Surface Preparation for the Repair of Deteriorated Concrete Resulting "
           "from Reinforcing Steel Corrosion", 2008,
           "ICRI Guideline No. 310.1R-2008 (formerly No. 03730)", "ICRI 310.1R-2008",
           "Title pages read. The undercut clearance, saw-cut depth and 6 in margin were "
           "seen only in summaries or are from memory: see the assumptions to confirm."),
    Source("UFGS-03931", "US Department of Defense, Unified Facilities Guide Specifications",
           "Guide specification section 03931 (concrete repair)", None, "UFGS 03931",
           "UFGS 03931",
           "Read: 'Determination of Removal Limits', 'Perimeter Saw Cut', §3.3.1.4 (25 % / "
           "20 % section loss; bracketed, editable values). Title and edition not recorded."),
    Source("OPSS-928-2006", "Ontario Provincial Standard Specification",
           "Construction Specification for Structure Rehabilitation - Concrete Removal", 2006,
           "OPSS 928 (November 2006)", "OPSS 928",
           "Definitions of full- and partial-depth removal read. Not used."),
    # ------------------------------------------------------- units, geostatistics, colours
    Source("NIST-SP811-2008", "A. Thompson, B.N. Taylor (NIST)",
           "Guide for the Use of the International System of Units (SI)", 2008,
           "NIST Special Publication 811, 2008 edition", "NIST SP 811 (2008)",
           "Appendix B: 1 ft = 0.3048 m and 1 in = 25.4 mm exactly, as used for the US "
           "customary units."),
    Source("Cressie-1985", "N. Cressie",
           "Fitting variogram models by weighted least squares", 1985,
           "Mathematical Geology 17(5) (1985) 563-586", "Cressie (1985)",
           "The weighted least-squares criterion of the variogram fit."),
    Source("Cressie-1993", "N. Cressie", "Statistics for Spatial Data", 1993,
           "revised ed., Wiley, New York", "Cressie (1993)", "Ordinary kriging."),
    Source("Journel-1980", "A.G. Journel",
           "The lognormal approach to predicting local distributions of selective mining unit "
           "grades", 1980, "Mathematical Geology 12(4) (1980) 285-303", "Journel (1980)",
           "Lognormal ordinary-kriging back-transform. Title from memory: confirm."),
    Source("Goovaerts-1997", "P. Goovaerts", "Geostatistics for Natural Resources Evaluation",
           1997, "Oxford University Press, New York", "Goovaerts (1997)",
           "Multi-Gaussian reading of kriging output."),
    Source("Journel-Huijbregts-1978", "A.G. Journel, C.J. Huijbregts", "Mining Geostatistics",
           1978, "Academic Press, London", "Journel & Huijbregts (1978)",
           "Conditioning by kriging of an unconditional simulation (ch. VII), from memory: "
           "confirm the chapter."),
    Source("Chiles-Delfiner-2012", "J.-P. Chilès, P. Delfiner",
           "Geostatistics: Modeling Spatial Uncertainty", 2012, "2nd ed., Wiley, Hoboken",
           "Chilès & Delfiner (2012)",
           "Conditional simulation by kriging (§7.3.1) and kriging with measurement error, the "
           "nugget filtered (§3.7.1), from memory: confirm the sections."),
    Source("Wood-Chan-1994", "A.T.A. Wood, G. Chan",
           "Simulation of stationary Gaussian processes in [0, 1]^d", 1994,
           "Journal of Computational and Graphical Statistics 3(4) (1994) 409-432",
           "Wood & Chan (1994)",
           "Circulant embedding and the FFT for unconditional Gaussian fields, from memory."),
    Source("Dietrich-Newsam-1997", "C.R. Dietrich, G.N. Newsam",
           "Fast and exact simulation of stationary Gaussian processes through circulant "
           "embedding of the covariance matrix", 1997,
           "SIAM Journal on Scientific Computing 18(4) (1997) 1088-1107",
           "Dietrich & Newsam (1997)",
           "Circulant embedding; padding enlarged while eigenvalues are negative, from memory."),
    Source("Keys-1981", "R.G. Keys",
           "Cubic convolution interpolation for digital image processing", 1981,
           "IEEE Transactions on Acoustics, Speech, and Signal Processing 29(6) (1981) "
           "1153-1160", "Keys (1981)",
           "The cubic convolution kernel (a = -1/2) of the sub-cell areas, from memory."),
    Source("Dempster-Laird-Rubin-1977", "A.P. Dempster, N.M. Laird, D.B. Rubin",
           "Maximum likelihood from incomplete data via the EM algorithm", 1977,
           "Journal of the Royal Statistical Society, Series B 39(1) (1977) 1-38",
           "Dempster, Laird & Rubin (1977)",
           "The EM iteration of the two-component mixture threshold, from memory."),
    Source("Farin-2002", "G. Farin",
           "Curves and Surfaces for CAGD: A Practical Guide", 2002,
           "5th ed., Morgan Kaufmann, San Francisco", "Farin (2002)",
           "Convex hull property of the Bernstein form (a polynomial patch lies between its "
           "least and greatest Bernstein coefficient), from memory: confirm the chapter."),
    Source("Deutsch-Journel-1998", "C.V. Deutsch, A.G. Journel",
           "GSLIB: Geostatistical Software Library and User's Guide", 1998,
           "2nd ed., Oxford University Press, New York", "Deutsch & Journel (1998)",
           "Sequential Gaussian simulation, considered and not used (its cost), from memory."),
    Source("Webster-Oliver-2007", "R. Webster, M.A. Oliver",
           "Geostatistics for Environmental Scientists", 2007, "2nd ed., Wiley, Chichester",
           "Webster & Oliver (2007)", "Cross-validation diagnostics."),
    Source("Okabe-Ito-2008", "M. Okabe, K. Ito",
           "Color Universal Design (CUD): how to make figures and presentations that are "
           "friendly to colorblind people", 2008, "J*FLY, online publication",
           "Okabe & Ito (2008)", "The colour-blind-safe hues of the maps and plots."),
)

#: The sources by key, in the order above (grouped by topic).
SOURCES: dict[str, Source] = {s.key: s for s in _ALL}

#: Values the project uses that were not read in their source (from memory, or seen only
#: in a summary or on a firm's page) or that rest on common practice only.  Each says what
#: value, where it is used, and what to check.
ASSUMPTIONS_TO_CONFIRM: tuple[str, ...] = (
    # --- from memory, or read only in a summary
    "Half-cell classes -200 / -350 mV CSE and their '>90 %' wording (class sets c876, "
    "c876_severe; combined rules; probability maps): from memory [ASTM-C876-91 App. X1]; "
    "check the wording and whether the current edition keeps them in a non-mandatory "
    "appendix [ASTM-C876-22a].",
    "Repeatability 10 mV and reproducibility 20 mV (qa/checks.py QA-REPEAT, QA-REPEATABILITY, "
    "QA-REPRO, QA-REPRODUCIBILITY; 20 mV of QA-DRIFT): from memory "
    "[ASTM-C876-15 precision section]; check the figures in the current edition.",
    "Pre-wetting: a reading moving more than 20 mV while it settles (about 5 min) "
    "(qa/checks.py QA-UNSTABLE): from memory [ASTM-C876-15 procedure]; check the limit and the "
    "time in the current edition.",
    "Maximum equipotential contour interval 100 mV (surfaces/contours.py; check and run "
    "refuse more): from memory [ASTM-C876-91 §6.2]; check it is in the current edition.",
    "Plotting position r/(n+1) of the cumulative frequency distribution "
    "(condition/potential.py, condition/plots.py): from memory [ASTM-C876-91 §6.3]; check.",
    "150 mV between adjacent readings means the grid is too coarse (qa/checks.py QA-ADJ-150, "
    "QA-ADJ-SPIKE): from memory [ASTM-C876-91 §5.1]; check in the current edition.",
    "Plausible potential range -1000 to +200 mV CSE (qa/checks.py QA-RANGE-LOW, QA-RANGE-HIGH): "
    "bounds are common practice around the Table 1 ranges, which are from memory "
    "[RILEM-TC154-2003 Table 1]; check Table 1.",
    "Resistivity risk classes 10 / 50 / 100 kOhm.cm, OPC at 20 °C (class set "
    "rilem_resistivity; combined rules; condition statements): from memory "
    "[RILEM-TC154-2000; Polder-2001]; check the table and its temperature.",
    "Wenner geometry: edge distance at least 2a, element thickness at least 4a, spacing at "
    "least 1.5 x the largest aggregate (condition/resistivity.py check_wenner_geometry): "
    "from memory [Gowers-Millard-1999; Polder-2001]; check the factors.",
    "Langford & Broomfield classes 5 / 10 / 20 kOhm.cm (class set langford_broomfield): "
    "from memory [Broomfield-2007]; check.",
    "AASHTO T 358 limits 12 / 21 / 37 / 254 kOhm.cm (100 x 200 mm) and 9.5 / 16.5 / 29 / 199 "
    "(150 x 300 mm) (class sets aashto_t358, aashto_t358_150x300, laboratory only): from "
    "memory [AASHTO-T358-15 Table 1]; check both cylinder sizes.",
    "Corrosion-rate levels 0.1 / 0.5 / 1.0 uA/cm2 (class set rilem_rate; combined rules; "
    "life summary): from memory, high confidence [Andrade-Alonso-2004]; check.",
    "Clear levels 0.2 / 1 / 10 uA/cm2 (class set clear_rate, optional): from memory "
    "[Clear-1989]; check.",
    "Stern-Geary B = 26 mV (active) and 52 mV (passive) (condition/corrosion_rate.py "
    "B_ACTIVE_MV, B_PASSIVE_MV; b_mv = \"active\" / \"passive\"): from memory "
    "[Andrade-Gonzalez-1978; Andrade-Alonso-2004]; check.",
    "Linear range 20 mV for sweeps and strict transients (condition/corrosion_rate.py "
    "LINEAR_LIMIT_MV, condition/transient.py): from memory [Andrade-Alonso-2004]; check. "
    "The 30 mV default for pulse transients is common practice.",
    "Polarized area A = pi d L of the confined bar length and R_p = dE/dI - R_ohm "
    "(condition/corrosion_rate.py; raw corrosion-rate readings): from memory "
    "[Andrade-Alonso-2004]; check.",
    "Randles model of the galvanostatic pulse (condition/transient.py): from memory "
    "[Newton-Sykes-1988; Andrade-Alonso-2004]; check.",
    "Pitting factor 4-8 and the hemispherical pit area (condition/life.py pit_area_mm2, "
    "not used by run): from memory [Gonzalez-Andrade-1995; Val-Melchers-1997]; check the "
    "expressions.",
    "Time to cover cracking, x_crit = 7.53 + 9.32 c/phi um (condition/life.py; the life "
    "summary of the report): from memory [Alonso-Andrade-1998]; check the coefficients.",
    "Resistivity-rate estimate i_corr = 26-30 / rho (condition/resistivity.py "
    "icorr_estimate_from_resistivity, optional): from memory, low confidence "
    "[Alonso-Andrade-1988]; check the constant.",
    "Repair margin 150 mm (6 in) beyond the sounded limits "
    "(repair/layout.py LayoutParams.margin_mm; "
    "site template): from memory, not found verbatim [ICRI-310.1R-2008]; check.",
    "Saw-cut depth 3/4 in (19.05 mm) (repair/layout.py sawcut_depth_mm): seen in a project "
    "specification built on [ICRI-310.1R-2008], older editions may say 1/2 in; check the "
    "guide.",
    "Undercut clearance max(3/4 in, 1/4 in + largest aggregate) (repair/layout.py "
    "undercut_clearance_mm, rule icri): seen in a trade-magazine summary of "
    "[ICRI-310.1R-2008]; check the guide.",
    "Ag/AgCl in 3 M KCl at +210 mV vs SHE (corrections.py, electrode ag_agcl_3m_kcl): seen "
    "only on a firm's web page; check a published table [Ives-Janz-1961].",
    "ACI 318 cover tolerance -1/2 in for members deeper than 8 in (sample site "
    "millbrook_garage, low-cover thresholds): from memory [ACI-318-19 §26.6.2.1]; check.",
    "Conditional simulation (surfaces/simulation.py): conditioning by kriging, the nugget "
    "filtered as measurement error, circulant embedding, from memory "
    "[Journel-Huijbregts-1978 ch. VII; Chiles-Delfiner-2012 §7.3.1, §3.7.1] "
    "[Wood-Chan-1994; Dietrich-Newsam-1997]; the unconditional value at a reading by "
    "simple kriging from 4 x 4 lattice nodes with independent residuals: common practice; "
    "the cost of sequential Gaussian simulation, the alternative not chosen "
    "[Deutsch-Journel-1998 §V.2.3]; the cubic convolution kernel of the sub-cell areas "
    "[Keys-1981]; check.",
    "Mixture threshold: the EM iteration (condition/potential.py) "
    "[Dempster-Laird-Rubin-1977, from memory]; the sub-cell areas' shortcut, a quarter cell "
    "counted whole when its bicubic patch's Bernstein coefficients lie on one side "
    "(surfaces/_simkernel.py bernstein_hull) [Farin-2002 ch. 5, from memory]; check.",
    "Kriging: the variance scaled so that the leave-one-out MSSE is 1 "
    "(stages/map_surfaces.py), the "
    "multi-Gaussian reading of kriging output for the probability maps "
    "(condition/probability.py), the lognormal back-transform (surfaces/kriging.py): common "
    "practice, from memory "
    "[Webster-Oliver-2007 §8.3; Goovaerts-1997 ch. 7; Journel-1980; Cressie-1993 §3.2]; "
    "check.",
    "Joints: expansion and isolation joints break the electrical continuity of the "
    "reinforcing mat, construction and control joints do not (config.JOINT_TYPES, "
    "BREAKING_JOINT_TYPES; a joint layer without a type is taken as construction joints, "
    "common practice); a half-cell survey needs a ground connection in each continuity region "
    "(QA-GROUND-CONNECTION): from memory [ACI-224.3R-95; ACI-222R-19; ASTM-C876-22a]; check "
    "the clauses.",
    "Open items of the project's notes not used by the code yet: RILEM continuity limits "
    "(< 1 ohm, < 1 mV) and grid sizes 0.15-1.0 m [RILEM-TC154-2003]; cylinder correction "
    "factors [Morris-Moreno-1996]; the T 358 lime-water curing factor 1.1 "
    "[AASHTO-T358-15]; parking-deck cover table [ACI-362.1R-12]; crack-width growth after "
    "cracking; galvanostatic pulse current and duration ranges [Andrade-Alonso-2004].",
    # --- common practice only
    "Edge conventions: -200 and -350 mV are both 'uncertain'; a resistivity on an edge takes "
    "the higher-resistivity class; rates 0.1 -> low, 0.5 -> moderate, 1.0 -> moderate "
    "(condition/classes.py): common practice, the sources do not say.",
    "A 'severe' class below -500 mV CSE (class set c876_severe): common practice, not an "
    "ASTM class.",
    "Resistivity referred to 20 °C with E_a = 25 kJ/mol (site keys resistivity_reference_c, "
    "activation_energy_kj_mol): common practice, inside the 9-39 kJ/mol reported "
    "[Coyle-Spragg-2019]; check for the concrete surveyed.",
    "Plausible ranges of resistivity 0.5-2000 kOhm.cm, corrosion rate 0.001-100 uA/cm2 and "
    "cover 3-200 mm (measurements/builtin.py): common practice.",
    "Open lead (more than 90 % of the potentials within ±5 mV of 0 and an interquartile range "
    "of at most 5 mV, at least 3 readings; QA-OPEN-LEAD), reversed leads (more than 90 % of "
    "the potentials above +100 mV CSE; QA-REVERSED-LEADS), local spike (over 150 mV from all "
    "of two or more neighbours), control-point drift over 20 mV (qa/checks.py): common practice, "
    "thresholds our own; that potentials of steel in concrete read negative vs CSE with the "
    "steel on the positive terminal is the sign convention of [ASTM-C876-22a], check the "
    "clause.",
    "Grid control points: a residual of the least-squares tie above 0.1 m (0.33 ft) is "
    "reported (crs.py RESIDUAL_TOLERANCE_M; GeoreferenceWarning, geo-corrosion check): common "
    "practice, the tolerance our own.",
    "Default contour interval 50 mV (site key contour_interval_mv): common practice.",
    "Low cover: below the specified cover minus its tolerance, else below 25 mm (1 in) "
    "(stages/plan_repairs.py): common practice.",
    "Combined condition rules, e.g. low cover with E < -350 mV or rho < 10 kOhm.cm is high "
    "priority (condition/combined.py DEFAULT_RULES; zoning): common practice.",
    "Repair layout: merge gap 300 mm, bounding rectangle when it adds at most 25 %, "
    "minimum repair side and notch 300 mm, extension to a free edge within the margin "
    "(repair/layout.py LayoutParams): common practice.",
    "Depth classes above the bars / below the bars / full depth, full depth beyond half the "
    "slab, default cover 38 mm and bar 16 mm (repair/layout.py): common practice; names and limits "
    "are owner-specific.",
    "Bid items and units, a 20 % contingency line, galvanic anodes as ceil(perimeter / "
    "spacing) with no default spacing (quantities.py): common practice.",
    "Repair sides rounded up to multiples of 3 in (US sites) or 50 mm (metric sites), the "
    "extra split evenly or put away from a joint, an exclusion or the slab edge "
    "(repair/rounding.py; site key repair_increment): common practice.",
    "A spall without a depth taken at half the cover, so above the bars; a delamination "
    "without a depth at the bars, so below them (repair/layout.py "
    "SPALL_DEPTH_SHARE_OF_COVER): common practice.",
    "Bar replacement allowance: 10 % of the area of the repairs that expose the bars, with a "
    "two-way top mat at 12 in (site keys bar_replacement_share, bar_spacing; "
    "repair/tender.py): common practice.",
    "Area treatments paid on whole bays between joints and column lines, a bay paid when a "
    "treatment zone covers more than 10 % of it (site keys pay_area, pay_area_share; "
    "repair/tender.py): common practice.",
    "Site threshold where the weighted mixture components cross, and the Ashman's D < 2 "
    "warning (condition/potential.py): common practice, after [Gulikers-Elsener-2008].",
    "Bar review beyond 25 % section loss (20 % for adjacent bars) (condition/life.py): read "
    "[UFGS-03931 §3.3.1.4], where they are editable defaults; check the owner's "
    "specification.",
)

#: A citation in the project's form: ``[KEY]`` or ``[KEY place]``, several joined by "; ".
CITATION_RE = re.compile(r"\[([^\[\]\n]+)\]")
#: A key: a word with a capital letter first, then hyphen-joined parts, at least one digit.
_KEY_RE = re.compile(r"[A-Z][A-Za-z]+(?:-[A-Za-z0-9.]*[A-Za-z0-9])+")


def cite(key: str, where: str = "") -> str:
    """Return a short citation for a reader, e.g. ``"ASTM C876-22a, §7"``.

    Raises
    ------
    KeyError
        If ``key`` is not in :data:`SOURCES`.

    Examples
    --------
    >>> cite("ASTM-C876-22a", "§5.1.1.2")
    'ASTM C876-22a, §5.1.1.2'
    >>> cite("Stern-Geary-1957")
    'Stern & Geary (1957)'
    """
    if key not in SOURCES:
        raise KeyError(f"unknown bibliography key {key!r}; see geo_corrosion.bibliography")
    short = SOURCES[key].short
    return f"{short}, {where}" if where else short


def cited_keys(text: str) -> list[str]:
    """Return the keys cited in ``text`` in the project's form, in order, without repeats.

    Only the first word of each citation in brackets is taken, and only when it looks
    like a key (a capital letter, hyphen-joined parts, a digit); ``[condition.combined]``
    or ``[1]`` are not citations.

    Examples
    --------
    >>> cited_keys("0.9 mV/°C [ASTM-C876-22a §5.1.1.2; Stern-Geary-1957] x[0]")
    ['ASTM-C876-22a', 'Stern-Geary-1957']
    """
    out: dict[str, None] = {}
    for m in CITATION_RE.finditer(text):
        for part in m.group(1).split(";"):
            word = part.strip().split(" ")[0].rstrip(",")
            if _KEY_RE.fullmatch(word) and any(c.isdigit() for c in word):
                out[word] = None
    return list(out)


def _md(text: str) -> str:
    return text.replace("|", "\\|").replace("*", "\\*").replace("_", "\\_")


def bibliography_markdown() -> str:
    """Return ``docs/bibliography.md``: the citation form and every source, by topic order."""
    lines = [
        "# Bibliography",
        "",
        "<!-- Generated from geo_corrosion/bibliography.py by bibliography_markdown(); "
        "do not edit by hand. -->",
        "",
        "Every published source geo_corrosion cites. The code, the docs, the sample sites and "
        "the tests cite a source by its key in square brackets, followed by the clause, table "
        "or equation: `[ASTM-C876-22a §5.1.1.2]`. Several citations share one pair of "
        "brackets, separated by `; `. `from memory` after a citation marks a value recalled "
        "from the source and not read again, `to confirm` a value seen only in a summary of "
        "it; such values, and those resting on common "
        "practice only, are listed under \"Assumptions to confirm\" in "
        "[methods.md](methods.md#9-assumptions-to-confirm).",
        "",
        "| Key | Source | Note |",
        "|---|---|---|",
    ]
    for s in SOURCES.values():
        year = f" ({s.year})" if s.year is not None else ""
        ref = f"{_md(s.authors)}{year}. *{_md(s.title)}*. {_md(s.designation)}."
        lines.append(f"| `{s.key}` | {ref} | {_md(s.note)} |")
    return "\n".join(lines) + "\n"


def assumptions_markdown() -> str:
    """Return the list of :data:`ASSUMPTIONS_TO_CONFIRM` as Markdown bullets."""
    return "\n".join(f"- {a}" for a in ASSUMPTIONS_TO_CONFIRM) + "\n"
