"""Default styles of the run's layers for any GIS: QGIS QML and OGC SLD, built as plain XML.

Every vector layer the GeoPackage exporter writes gets one default style in the
GeoPackage's ``layer_styles`` table (the table QGIS reads and writes, also read by other
GIS through OGR: ``f_table_name``, ``styleQML``, ``styleSLD``, ``useAsDefault`` ...), so a
user who opens ``survey.gpkg`` sees the class colours of the web map, contour labels with
their unit, repair outlines hatched and labelled with their ids, sounding hatched, zones
outlined and readings graduated by value.  Legend names are the report's words
(:mod:`geo_corrosion.vocabulary`); colours are the web map's
(:mod:`geo_corrosion.exporters.webmap.palette`): the class fills share its severity ramp,
the overlays its distinct hues.

A style is first described as a :class:`StyleSpec` (renderer, symbols, labels), then written
as QML (QGIS's own style file, root ``<qgis>``) by :func:`to_qml` and as SLD 1.1 (OGC
Symbology Encoding 1.1, ``se:`` namespace) by :func:`to_sld`.  The QGIS project exporter
(:mod:`geo_corrosion.exporters.qgis_project`) puts the same QML children inside its
``<maplayer>`` elements.  Nothing here imports QGIS.

Rasters get a ``.qml`` beside them (:func:`write_raster_styles`): a pseudocolour ramp of the
web map's colours for the kriged surfaces and probabilities, grey for the kriging variance.
"""

from __future__ import annotations

import math
import sqlite3
import xml.etree.ElementTree as ET
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from geo_corrosion._io import atomic_write
from geo_corrosion.errors import ExportError
from geo_corrosion.exporters.webmap.palette import (
    NO_ACTION_COLOR,
    OVERLAY,
    SEVERITY_RAMP,
    ZONE_COLORS,
    class_ramp,
    hex_color,
    point_class_colors,
    ramp_colors,
    reading_color,
)
from geo_corrosion.vocabulary import VOCABULARY, class_label, unit_label
from geo_corrosion.vocabulary import label as term

if TYPE_CHECKING:
    from geo_corrosion.model.results import RunResult

__all__ = ["Category", "FillLayer", "Labels", "LineLayer", "MarkerLayer", "Range",
           "StyleSpec", "Symbol", "GRID_SUFFIX", "QGIS_VERSION", "STYLE_NAME",
           "class_categories", "grid_spacing_m", "grid_layers", "qml_root_attrs",
           "raster_styles", "run_context", "split_level", "layer_specs", "raster_qml",
           "to_qml", "to_sld", "qml_children", "write_layer_styles", "write_raster_styles"]

#: The QGIS version our QML claims (the oldest we test with: Debian's 3.22).
QGIS_VERSION = "3.22.0"
#: ``styleName`` of our default styles in ``layer_styles``.
STYLE_NAME = "geo_corrosion"
#: Suffix of the survey-grid layer (``<level>_grid``): the nodes repairs snap to.
GRID_SUFFIX = "grid"
#: Diverging colours of the cross-validation residuals (Okabe & Ito blue, grey, vermilion).
_RESIDUAL_COLORS = ("#0072B2", "#BBBBBB", "#D55E00")
_SE = "http://www.opengis.net/se"
_SLD = "http://www.opengis.net/sld"
_OGC = "http://www.opengis.net/ogc"
_XSI = "http://www.w3.org/2001/XMLSchema-instance"


def _register_namespaces() -> None:
    """Register the SLD prefixes with ElementTree (its registry is global to the process).

    Called before each document is written, not once at import: another library registering
    its own default namespace (``""``) drops ours, and the SLD then comes out with ``ns0:``
    prefixes (seen in a forked exporter of a ``--jobs 2`` run).
    """
    ET.register_namespace("se", _SE)
    ET.register_namespace("ogc", _OGC)
    ET.register_namespace("xsi", _XSI)
    ET.register_namespace("", _SLD)


_register_namespaces()


# ---------------------------------------------------------------- style description


@dataclass(frozen=True)
class FillLayer:
    """A polygon fill; ``brush`` is QGIS's brush name.

    Brushes: solid, no, b_diagonal, f_diagonal, diagonal_x, cross, horizontal.
    """

    color: str
    outline: str
    width_mm: float = 0.26
    brush: str = "solid"
    outline_style: str = "solid"


@dataclass(frozen=True)
class LineLayer:
    """A line: width in mm, ``dash`` one of solid, dash, dot."""

    color: str
    width_mm: float = 0.26
    dash: str = "solid"


@dataclass(frozen=True)
class MarkerLayer:
    """A point marker: ``shape`` one of circle, square, triangle, diamond, cross."""

    color: str
    outline: str = "#FFFFFF"
    size_mm: float = 2.0
    shape: str = "circle"
    outline_mm: float = 0.2
    hollow: bool = False


SymbolLayer = FillLayer | LineLayer | MarkerLayer


@dataclass(frozen=True)
class Symbol:
    """One symbol: its kind (fill, line or marker) and its layers, bottom first."""

    kind: str
    layers: tuple[SymbolLayer, ...]
    opacity: float = 1.0


@dataclass(frozen=True)
class Category:
    """A class of a categorised renderer: attribute value, legend label, symbol."""

    value: str
    label: str
    symbol: Symbol


@dataclass(frozen=True)
class Range:
    """A range of a graduated renderer (``lo <= v <= hi``), legend label and symbol."""

    lo: float
    hi: float
    label: str
    symbol: Symbol


@dataclass(frozen=True)
class Labels:
    """Feature labels: a QGIS expression and the attribute an SLD labels with."""

    expression: str
    sld_property: str
    placement: str = "point"  # point, line or polygon
    size_pt: float = 8.0
    color: str = "#000000"
    buffer: str = "#FFFFFF"
    priority: int = 5  # 0 (lowest) to 10: which labels QGIS places first where they collide
    bold: bool = False


@dataclass
class StyleSpec:
    """The style of one layer: its legend title, renderer and labels."""

    layer: str
    title: str
    geometry: str  # point, line or polygon
    renderer: str = "single"  # single, categorized or graduated
    attr: str = ""  # attribute (or QGIS expression) of a categorised/graduated renderer
    sld_attr: str = ""  # the attribute an SLD filter compares (a plain column)
    symbol: Symbol | None = None
    categories: list[Category] = field(default_factory=list)
    ranges: list[Range] = field(default_factory=list)
    labels: Labels | None = None
    opacity: float = 1.0
    description: str = ""


# ---------------------------------------------------------------- colours


def _rgba(color: str, alpha: float = 1.0) -> str:
    """Return QGIS's ``r,g,b,a`` of ``#RRGGBB``."""
    c = color.lstrip("#")
    r, g, b = (int(c[i:i + 2], 16) for i in (0, 2, 4))
    return f"{r},{g},{b},{int(round(alpha * 255))}"


def _num(v: float) -> str:
    """Return a number as text without a needless trailing zero."""
    return f"{float(v):.10g}"


# ---------------------------------------------------------------- QML


def _options(parent: ET.Element, props: dict[str, str]) -> None:
    """Write symbol-layer properties both as QGIS 3 ``Option`` map and as ``prop`` rows."""
    m = ET.SubElement(parent, "Option", type="Map")
    for k, v in props.items():
        ET.SubElement(m, "Option", name=k, value=v, type="QString")
    for k, v in props.items():
        ET.SubElement(parent, "prop", k=k, v=v)


def _qml_symbol_layer(lay: SymbolLayer) -> ET.Element:
    if isinstance(lay, FillLayer):
        el = ET.Element("layer", {"class": "SimpleFill", "enabled": "1", "locked": "0",
                                  "pass": "0"})
        _options(el, {"color": _rgba(lay.color), "style": lay.brush,
                      "outline_color": _rgba(lay.outline),
                      "outline_style": lay.outline_style if lay.width_mm > 0 else "no",
                      "outline_width": _num(lay.width_mm), "outline_width_unit": "MM",
                      "joinstyle": "miter"})
    elif isinstance(lay, LineLayer):
        el = ET.Element("layer", {"class": "SimpleLine", "enabled": "1", "locked": "0",
                                  "pass": "0"})
        _options(el, {"line_color": _rgba(lay.color), "line_width": _num(lay.width_mm),
                      "line_width_unit": "MM", "capstyle": "round", "joinstyle": "round",
                      "line_style": {"solid": "solid", "dash": "dash", "dot": "dot"}[lay.dash]})
    else:
        el = ET.Element("layer", {"class": "SimpleMarker", "enabled": "1", "locked": "0",
                                  "pass": "0"})
        _options(el, {"name": lay.shape,
                      "color": _rgba(lay.color, 0.0 if lay.hollow else 1.0),
                      "outline_color": _rgba(lay.outline),
                      "outline_width": _num(lay.outline_mm), "outline_width_unit": "MM",
                      "outline_style": "solid", "size": _num(lay.size_mm), "size_unit": "MM",
                      "scale_method": "diameter"})
    return el


def _qml_symbol(name: str, sym: Symbol) -> ET.Element:
    el = ET.Element("symbol", {"name": name, "type": sym.kind, "alpha": _num(sym.opacity),
                               "clip_to_extent": "1", "force_rhr": "0"})
    for lay in sym.layers:
        el.append(_qml_symbol_layer(lay))
    return el


def _qml_renderer(spec: StyleSpec) -> ET.Element:
    if spec.renderer == "categorized":
        r = ET.Element("renderer-v2", {"type": "categorizedSymbol", "attr": spec.attr,
                                       "symbollevels": "0", "enableorderby": "0",
                                       "forceraster": "0"})
        cats = ET.SubElement(r, "categories")
        syms = ET.SubElement(r, "symbols")
        for i, c in enumerate(spec.categories):
            ET.SubElement(cats, "category", value=c.value, symbol=str(i), label=c.label,
                          render="true")
            syms.append(_qml_symbol(str(i), c.symbol))
        return r
    if spec.renderer == "graduated":
        r = ET.Element("renderer-v2", {"type": "graduatedSymbol", "attr": spec.attr,
                                       "graduatedMethod": "GraduatedColor",
                                       "symbollevels": "0", "enableorderby": "0",
                                       "forceraster": "0"})
        rngs = ET.SubElement(r, "ranges")
        syms = ET.SubElement(r, "symbols")
        for i, g in enumerate(spec.ranges):
            ET.SubElement(rngs, "range", lower=_num(g.lo), upper=_num(g.hi), symbol=str(i),
                          label=g.label, render="true")
            syms.append(_qml_symbol(str(i), g.symbol))
        ET.SubElement(r, "mode", name="manual")
        return r
    r = ET.Element("renderer-v2", {"type": "singleSymbol", "symbollevels": "0",
                                   "enableorderby": "0", "forceraster": "0"})
    syms = ET.SubElement(r, "symbols")
    assert spec.symbol is not None, spec.layer
    syms.append(_qml_symbol("0", spec.symbol))
    return r


def _qml_labeling(lab: Labels) -> ET.Element:
    el = ET.Element("labeling", type="simple")
    s = ET.SubElement(el, "settings", calloutType="simple")
    ts = ET.SubElement(s, "text-style", {
        "fieldName": lab.expression, "isExpression": "1", "fontSize": _num(lab.size_pt),
        "fontSizeUnit": "Point", "textColor": _rgba(lab.color),
        "fontWeight": "75" if lab.bold else "50",
        "textOpacity": "1", "multilineHeight": "1", "namedStyle": "", "fontItalic": "0"})
    ET.SubElement(ts, "text-buffer", {"bufferDraw": "1", "bufferSize": "0.8",
                                      "bufferSizeUnits": "MM",
                                      "bufferColor": _rgba(lab.buffer), "bufferOpacity": "1",
                                      "bufferNoFill": "1", "bufferJoinStyle": "128"})
    ET.SubElement(s, "text-format", {"wrapChar": "", "multilineAlign": "1",
                                     "formatNumbers": "0"})
    if lab.placement == "line":  # curved along the line, repeated, in the line
        ET.SubElement(s, "placement", {"placement": "3", "placementFlags": "9",
                                       "repeatDistance": "60", "repeatDistanceUnits": "MM",
                                       "maxCurvedCharAngleIn": "25",
                                       "maxCurvedCharAngleOut": "-25",
                                       "overrunDistance": "0", "dist": "0",
                                       "distUnits": "MM", "priority": str(lab.priority)})
    elif lab.placement == "polygon":  # horizontal, inside the polygon
        ET.SubElement(s, "placement", {"placement": "1", "centroidInside": "1",
                                       "centroidWhole": "0", "fitInPolygonOnly": "0",
                                       "priority": str(lab.priority), "dist": "0",
                                       "distUnits": "MM"})
    else:  # around the point
        ET.SubElement(s, "placement", {"placement": "0", "dist": "1", "distUnits": "MM",
                                       "priority": str(lab.priority)})
    ET.SubElement(s, "rendering", {"drawLabels": "1", "obstacle": "1",
                                   "upsidedownLabels": "0", "displayAll": "0",
                                   "labelPerPart": "0", "mergeLines": "0",
                                   "scaleVisibility": "0", "limitNumLabels": "0",
                                   "minFeatureSize": "0", "obstacleType": "1"})
    return el


def qml_children(spec: StyleSpec) -> list[ET.Element]:
    """Return the style elements of a vector layer (QML root children, also of a project)."""
    out = [_qml_renderer(spec)]
    if spec.labels is not None:
        out.append(_qml_labeling(spec.labels))
    cp = ET.Element("customproperties")
    m = ET.SubElement(cp, "Option", type="Map")
    ET.SubElement(m, "Option", name="geo_corrosion/style", value=STYLE_NAME, type="QString")
    out.append(cp)
    for tag, text in (("blendMode", "0"), ("featureBlendMode", "0"),
                      ("layerOpacity", _num(spec.opacity))):
        e = ET.Element(tag)
        e.text = text
        out.append(e)
    return out


def qml_root_attrs(spec: StyleSpec) -> dict[str, str]:
    """Return the attributes of a vector layer's QML root (or ``<maplayer>``)."""
    return {"labelsEnabled": "1" if spec.labels is not None else "0",
            "hasScaleBasedVisibilityFlag": "0", "minScale": "100000000", "maxScale": "0",
            "readOnly": "0", "simplifyDrawingHints": "0", "simplifyLocal": "1",
            "styleCategories": "AllStyleCategories"}


def _xml_text(root: ET.Element) -> str:
    ET.indent(root)
    return ET.tostring(root, encoding="unicode")


def to_qml(spec: StyleSpec) -> str:
    """Return the QML (QGIS style file) of a vector layer's style."""
    root = ET.Element("qgis", {"version": QGIS_VERSION, **qml_root_attrs(spec)})
    root.extend(qml_children(spec))
    return "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n" + _xml_text(root)


# ---------------------------------------------------------------- SLD


def _se(parent: ET.Element, tag: str, text: str | None = None, **attrs: str) -> ET.Element:
    el = ET.SubElement(parent, f"{{{_SE}}}{tag}", attrs)
    if text is not None:
        el.text = text
    return el


def _svg(parent: ET.Element, name: str, value: str) -> None:
    _se(parent, "SvgParameter", value, name=name)


_HATCH = {"b_diagonal": "shape://slash", "f_diagonal": "shape://backslash",
          "diagonal_x": "shape://times", "cross": "shape://plus",
          "horizontal": "shape://horline", "vertical": "shape://vertline"}
_MARK = {"circle": "circle", "square": "square", "triangle": "triangle", "diamond": "square",
         "cross": "cross"}


def _px(mm: float) -> str:
    return _num(round(mm / 0.28, 2))


def _sld_symbolizers(rule: ET.Element, sym: Symbol) -> None:
    for lay in sym.layers:
        if isinstance(lay, FillLayer):
            ps = _se(rule, "PolygonSymbolizer")
            if lay.brush == "solid":
                f = _se(ps, "Fill")
                _svg(f, "fill", lay.color.upper())
                if sym.opacity < 1:
                    _svg(f, "fill-opacity", _num(sym.opacity))
            elif lay.brush in _HATCH:  # hatching: a repeated mark (GeoServer's shape://)
                f = _se(ps, "Fill")
                gf = _se(_se(f, "GraphicFill"), "Graphic")
                mk = _se(gf, "Mark")
                _se(mk, "WellKnownName", _HATCH[lay.brush])
                st = _se(mk, "Stroke")
                _svg(st, "stroke", lay.color.upper())
                _svg(st, "stroke-width", "1")
                _se(gf, "Size", "8")
            if lay.width_mm > 0 and lay.outline_style != "no":
                st = _se(ps, "Stroke")
                _svg(st, "stroke", lay.outline.upper())
                _svg(st, "stroke-width", _px(lay.width_mm))
                if lay.outline_style == "dash":
                    _svg(st, "stroke-dasharray", "6 3")
        elif isinstance(lay, LineLayer):
            ls = _se(rule, "LineSymbolizer")
            st = _se(ls, "Stroke")
            _svg(st, "stroke", lay.color.upper())
            _svg(st, "stroke-width", _px(lay.width_mm))
            if lay.dash != "solid":
                _svg(st, "stroke-dasharray", "6 3" if lay.dash == "dash" else "1 3")
        else:
            pt = _se(rule, "PointSymbolizer")
            g = _se(pt, "Graphic")
            mk = _se(g, "Mark")
            _se(mk, "WellKnownName", _MARK.get(lay.shape, "circle"))
            if not lay.hollow:
                f = _se(mk, "Fill")
                _svg(f, "fill", lay.color.upper())
            st = _se(mk, "Stroke")
            _svg(st, "stroke", lay.outline.upper())
            _svg(st, "stroke-width", _px(lay.outline_mm))
            _se(g, "Size", _px(lay.size_mm))


def _sld_rule(fts: ET.Element, name: str, title: str, sym: Symbol,
              flt: ET.Element | None) -> ET.Element:
    rule = _se(fts, "Rule")
    _se(rule, "Name", name)
    _se(_se(rule, "Description"), "Title", title)
    if flt is not None:
        rule.append(flt)
    _sld_symbolizers(rule, sym)
    return rule


def _ogc(parent: ET.Element | None, tag: str, text: str | None = None) -> ET.Element:
    el = (ET.Element(f"{{{_OGC}}}{tag}") if parent is None
          else ET.SubElement(parent, f"{{{_OGC}}}{tag}"))
    if text is not None:
        el.text = text
    return el


def _equal(prop: str, value: str) -> ET.Element:
    f = _ogc(None, "Filter")
    eq = _ogc(f, "PropertyIsEqualTo")
    _ogc(eq, "PropertyName", prop)
    _ogc(eq, "Literal", value)
    return f


def _between(prop: str, lo: float, hi: float) -> ET.Element:
    f = _ogc(None, "Filter")
    b = _ogc(f, "PropertyIsBetween")
    _ogc(b, "PropertyName", prop)
    _ogc(_ogc(b, "LowerBoundary"), "Literal", _num(lo))
    _ogc(_ogc(b, "UpperBoundary"), "Literal", _num(hi))
    return f


def to_sld(spec: StyleSpec) -> str:
    """Return an SLD 1.1 (Symbology Encoding 1.1) document of a layer's style.

    Categories become rules with a ``PropertyIsEqualTo`` filter on :attr:`StyleSpec.sld_attr`,
    ranges rules with ``PropertyIsBetween``; hatches are GeoServer's ``shape://`` marks,
    labels a ``TextSymbolizer`` of one attribute.
    """
    _register_namespaces()
    root = ET.Element(f"{{{_SLD}}}StyledLayerDescriptor", {
        "version": "1.1.0",
        f"{{{_XSI}}}schemaLocation": "http://www.opengis.net/sld "
                                     "http://schemas.opengis.net/sld/1.1.0/"
                                     "StyledLayerDescriptor.xsd"})
    nl = ET.SubElement(root, f"{{{_SLD}}}NamedLayer")
    _se(nl, "Name", spec.layer)
    us = ET.SubElement(nl, f"{{{_SLD}}}UserStyle")
    _se(us, "Name", STYLE_NAME)
    _se(_se(us, "Description"), "Title", spec.title)
    fts = _se(us, "FeatureTypeStyle")
    attr = spec.sld_attr or spec.attr
    if spec.renderer == "categorized":
        for c in spec.categories:
            _sld_rule(fts, c.value, c.label, c.symbol, _equal(attr, c.value))
    elif spec.renderer == "graduated":
        for g in spec.ranges:
            _sld_rule(fts, f"{_num(g.lo)} - {_num(g.hi)}", g.label, g.symbol,
                      _between(attr, g.lo, g.hi))
    else:
        assert spec.symbol is not None, spec.layer
        _sld_rule(fts, spec.layer, spec.title, spec.symbol, None)
    if spec.labels is not None:
        rule = _se(fts, "Rule")
        _se(rule, "Name", "labels")
        ts = _se(rule, "TextSymbolizer")
        lab = _se(ts, "Label")
        _ogc(lab, "PropertyName", spec.labels.sld_property)
        font = _se(ts, "Font")
        _svg(font, "font-size", _num(round(spec.labels.size_pt * 1.33, 1)))
        if spec.labels.placement == "line":
            _se(_se(ts, "LabelPlacement"), "LinePlacement")
        halo = _se(ts, "Halo")
        _se(halo, "Radius", "1.5")
        _svg(_se(halo, "Fill"), "fill", spec.labels.buffer.upper())
        _svg(_se(ts, "Fill"), "fill", spec.labels.color.upper())
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + _xml_text(root)


# ---------------------------------------------------------------- what each layer looks like


def _fill(color: str, outline: str | None = None, width: float = 0.0, brush: str = "solid",
          opacity: float = 1.0, outline_style: str = "solid") -> Symbol:
    return Symbol("fill", (FillLayer(color, outline or color, width, brush, outline_style),),
                  opacity)


def _hatch(color: str, brush: str, width: float = 0.5, outline_style: str = "solid") -> Symbol:
    """Hatching of one colour with an outline of the same colour."""
    return Symbol("fill", (FillLayer(color, color, width, brush, outline_style),))


def _line(color: str, width: float = 0.26, dash: str = "solid") -> Symbol:
    return Symbol("line", (LineLayer(color, width, dash),))


def _marker(color: str, size: float = 1.6, shape: str = "circle", outline: str | None = None,
            hollow: bool = False, outline_mm: float = 0.15) -> Symbol:
    return Symbol("marker", (MarkerLayer(color, outline or color, size, shape, outline_mm,
                                         hollow),))


def _by_geometry(geometry: str, color: str) -> Symbol:
    if geometry == "point":
        return _marker(color)
    if geometry == "line":
        return _line(color, 0.4)
    return _fill(color, color, 0.4, "no")


def _quote(s: str) -> str:
    """Return a QGIS expression string literal."""
    return "'" + s.replace("'", "''") + "'"


def _kind(name: str) -> Any:
    from geo_corrosion.measurements import get_kind

    try:
        return get_kind(name)
    except Exception:  # noqa: BLE001 - a plugin kind not installed: defaults
        return None


def _kind_label(kind: str) -> str:
    k = _kind(kind)
    return term(kind, getattr(k, "label", None) or kind.replace("_", " ").capitalize())


def _level_title(level: str, text: str, levels: dict[str, str]) -> str:
    """Return a legend title with its level (``"Level 2: ..."``) when the layer has one."""
    return f"{levels.get(level, level)}: {text}" if level else text


def class_categories(class_set: str, codes_colors: Sequence[tuple[int, str, str]] | None = None,
                     ) -> list[tuple[int, str, str]]:
    """Return ``(class code, owner label, map colour)`` of a class set's classes.

    The labels are the report's (:func:`geo_corrosion.vocabulary.class_label` of the class
    set's keys), the colours the web map's (:func:`.palette.class_ramp`: the class set's
    colours ranked by severity onto the ramp).  A class set not in ``CLASS_SETS`` takes
    the classes present in the layer, ``codes_colors`` (code, label, colour).

    Returns
    -------
    list of tuple
        In class-code order (increasing value of the variable).
    """
    from geo_corrosion.condition.classes import CLASS_SETS

    cs = CLASS_SETS.get(class_set)
    if cs is not None:
        ramp = class_ramp(class_set, list(cs.colors))
        out = []
        for code, (key, lab, col) in enumerate(zip(cs.keys, cs.labels, cs.colors,
                                                    strict=True)):
            text = class_label(class_set, key, None if f"{class_set}.{key}" in VOCABULARY
                               else lab)
            out.append((code, text, ramp[col.upper()]))
        return out
    rows = sorted(set(codes_colors or ()))
    ramp = class_ramp("", [c for _k, _t, c in rows], [k for k, _t, _c in rows])
    return [(k, t, ramp[c.upper()]) for k, t, c in rows]


@dataclass
class _Layer:
    """What the styles need to know of a GeoPackage layer (read through sqlite3)."""

    name: str
    geometry: str
    columns: list[str]
    con: sqlite3.Connection

    def distinct(self, *cols: str) -> list[tuple[Any, ...]]:
        sel = ", ".join(f'"{c}"' for c in cols)
        return [tuple(r) for r in self.con.execute(
            f'SELECT DISTINCT {sel} FROM "{self.name}"').fetchall()]

    def numbers(self, col: str) -> np.ndarray:
        rows = self.con.execute(
            f'SELECT "{col}" FROM "{self.name}" WHERE "{col}" IS NOT NULL').fetchall()
        v = np.array([r[0] for r in rows], dtype=float)
        out: np.ndarray = v[np.isfinite(v)]
        return out


def _decimals(values: Iterable[float]) -> int:
    """Return the decimals that print every value exactly (0 to 3)."""
    for d in range(4):
        if all(abs(v * 10 ** d - round(v * 10 ** d)) < 1e-6 for v in values):
            return d
    return 3


def _ramp_ranges(edges: Sequence[float], direction: int, unit: str,
                 symbol: Any, labels: Sequence[str] | None = None) -> list[Range]:
    """Ranges between ``edges`` coloured on the ramp (light = least severe)."""
    n = len(edges) - 1
    t = np.linspace(0.0, 1.0, n) if n > 1 else np.array([0.75])
    cols = [hex_color(c) for c in ramp_colors(t if direction > 0 else t[::-1])]
    d = _decimals(edges)
    u = unit_label(unit)
    out = []
    for i in range(n):
        lab = labels[i] if labels else f"{edges[i]:.{d}f} to {edges[i + 1]:.{d}f} {u}"
        out.append(Range(edges[i], edges[i + 1], lab, symbol(cols[i])))
    return out


def _readings_spec(lay: _Layer, kind: str, level_titles: dict[str, str],
                   class_sets: dict[str, str], index: int) -> StyleSpec:
    k = _kind(kind)
    col = getattr(k, "value_column", None) or "value"
    unit = getattr(k, "canonical_unit", "") or ""
    direction = int(getattr(k, "severity_direction", 1) or 1)
    title = f"{_kind_label(kind)} readings ({unit_label(unit)})" if unit else (
        f"{_kind_label(kind)} readings")
    if col not in lay.columns:
        return StyleSpec(lay.name, title, "point", symbol=_marker(reading_color(kind, index)))
    v = lay.numbers(col)
    def sym(c: str) -> Symbol:
        return _marker(c, 1.4)

    cs_name = class_sets.get(kind, "")
    ranges: list[Range] = []
    if cs_name and len(v):
        from geo_corrosion.condition.classes import CLASS_SETS

        cs = CLASS_SETS.get(cs_name)
        if cs is not None:
            cats = class_categories(cs_name)
            lo, hi = float(min(v.min(), cs.edges[0])), float(max(v.max(), cs.edges[-1]))
            edges = [math.floor(lo) - 1.0, *cs.edges, math.ceil(hi) + 1.0]
            ranges = [Range(edges[i], edges[i + 1], cats[i][1], sym(cats[i][2]))
                      for i in range(len(cats))]
    if not ranges and len(v):  # five classes of equal count (quantiles), on the ramp
        q = np.unique(np.round(np.quantile(v, np.linspace(0, 1, 6)), 6))
        if len(q) < 2:
            q = np.array([q[0] - 0.5, q[0] + 0.5])
        ranges = _ramp_ranges([float(x) for x in q], direction, unit, sym)
    if not ranges:
        return StyleSpec(lay.name, title, "point", symbol=_marker(reading_color(kind, index)))
    return StyleSpec(lay.name, title, "point", "graduated", attr=col, sld_attr=col,
                     ranges=ranges, description=f"readings graduated by {col}")


def _spec(lay: _Layer, level: str, what: str, level_titles: dict[str, str],
          class_sets: dict[str, str], grid_unit: str) -> StyleSpec:
    """Return the style of one layer, from its name without the level (``what``)."""
    name, geom = lay.name, lay.geometry
    t = str  # a title without its level: the level goes to the description (layer_specs)
    if what == "slab":
        return StyleSpec(name, t("Slab outline"), geom,
                         symbol=_fill(OVERLAY["slab"], OVERLAY["slab"], 0.6, "no"))
    if what == "exclusions":
        return StyleSpec(name, t("Excluded areas (not surveyed)"), geom,
                         symbol=_hatch(OVERLAY["exclusion"], "diagonal_x", 0.3))
    if what == "joints":
        return StyleSpec(name, t("Joints"), geom, "categorized",
                         attr='CASE WHEN "breaks_continuity" THEN 1 ELSE 0 END',
                         sld_attr="breaks_continuity", categories=[
                             Category("1", "Joint breaking the mat's continuity",
                                      _line(OVERLAY["joint_break"], 0.8, "dash")),
                             Category("0", "Joint", _line(OVERLAY["joint"], 0.5, "dash"))])
    sounding = {"delaminations": "delamination", "spalls": "spall",
                "soffit_delaminations": "soffit_delamination", "patches": "patch",
                "cracks": "crack"}
    if what in sounding:
        kind = sounding[what]
        color = OVERLAY.get(kind, OVERLAY["delamination"] if "delam" in kind
                            else OVERLAY["exclusion"])
        brush = {"spall": "f_diagonal", "patch": "horizontal"}.get(kind, "b_diagonal")
        sym = _line(color, 0.5) if geom == "line" else _hatch(color, brush, 0.4)
        labels = (Labels('"number"', "number", "polygon", 6.5, color, priority=3)
                  if "number" in lay.columns else None)
        return StyleSpec(name, t(f"{term(kind)} (sounding)"), geom, symbol=sym, labels=labels)
    if what.startswith("contours_"):
        kind = what[len("contours_"):]
        vals = [float(r[0]) for r in lay.distinct("value") if r[0] is not None]
        units = [str(r[0]) for r in lay.distinct("unit") if r[0]] if "unit" in lay.columns else []
        u = unit_label(units[0]) if units else ""
        d = _decimals(vals)
        expr = f'format_number("value", {d}) || {_quote(" " + u) if u else _quote("")}'
        return StyleSpec(name, t(f"{_kind_label(kind)} contours ({u})" if u else
                                 f"{_kind_label(kind)} contours"), geom,
                         symbol=_line(OVERLAY["contour"], 0.3),
                         labels=Labels(expr, "value", "line", 7.5), opacity=0.9)
    if what.startswith("bands_"):
        kind = what[len("bands_"):]
        k = _kind(kind)
        rows = sorted((float(a), float(b)) for a, b in lay.distinct("value_from", "value_to"))
        units = [str(r[0]) for r in lay.distinct("unit") if r[0]] if "unit" in lay.columns else []
        unit = units[0] if units else ""
        edges = sorted({x for r in rows for x in r})
        if len(edges) >= 2:
            ranges = _ramp_ranges(edges, int(getattr(k, "severity_direction", 1) or 1), unit,
                                  lambda c: _fill(c))
            return StyleSpec(name, t(f"{_kind_label(kind)} bands"), geom, "graduated",
                             attr="value_from", sld_attr="value_from", ranges=ranges,
                             opacity=0.85)
        return StyleSpec(name, t(f"{_kind_label(kind)} bands"), geom,
                         symbol=_fill(SEVERITY_RAMP[2]))
    if what.startswith("classes_") or what.startswith("thiessen_"):
        kind = what.split("_", 1)[1]
        crow = (lay.distinct("class_code", "class", "color", "class_set")
                if {"class_code", "class", "color", "class_set"} <= set(lay.columns) else [])
        cs_name = str(crow[0][3]) if crow else class_sets.get(kind, "")
        ccats = class_categories(cs_name, [(int(r[0]), str(r[1]), str(r[2]))
                                           for r in crow if r[0] is not None])
        thiessen = what.startswith("thiessen_")
        title = (f"{_kind_label(kind)}: cells of the readings" if thiessen
                 else f"{_kind_label(kind)} classes")
        if cs_name and not thiessen:
            title = term(cs_name, title)
        return StyleSpec(name, t(title), geom, "categorized", attr="class_code",
                         sld_attr="class_code",
                         categories=[Category(str(c), lab, _fill(col, "#FFFFFF", 0.1 if thiessen
                                                                   else 0.0))
                                     for c, lab, col in ccats], opacity=0.9)
    if what.startswith("points_"):
        kind = what[len("points_"):]
        prow: list[tuple[int, str]] = sorted(
            (int(r[0]), str(r[1])) for r in lay.distinct("class_code", "class")
            if r[0] is not None and int(r[0]) >= 0) if "class_code" in lay.columns else []
        from geo_corrosion.condition.classes import CLASS_SETS

        cs_name = class_sets.get(kind, "")
        cs = CLASS_SETS.get(cs_name)
        n = len(cs.keys) if cs is not None else (max(c for c, _ in prow) + 1 if prow else 0)
        pc = point_class_colors(n)
        plabels = ({c: lab for c, lab, _col in class_categories(cs_name)} if cs
                   else dict(prow))
        pcats = [Category(str(c), plabels.get(c, str(c)),
                          _marker(pc[c], 2.4, outline="#000000")) for c in range(n)]
        if not pcats:
            return StyleSpec(name, t(f"{_kind_label(kind)} readings"), geom,
                             symbol=_marker(reading_color(kind, 0), 2.4, outline="#000000"))
        return StyleSpec(name, t(f"{_kind_label(kind)} readings, by class"), geom,
                         "categorized", attr="class_code", sld_attr="class_code",
                         categories=pcats)
    if what.startswith("cv_residuals_"):
        kind = what[len("cv_residuals_"):]
        v = lay.numbers("residual") if "residual" in lay.columns else np.array([])
        units = [str(r[0]) for r in lay.distinct("unit") if r[0]] if "unit" in lay.columns else []
        u = unit_label(units[0]) if units else ""
        s = float(np.std(v)) if len(v) > 1 else 1.0
        s = s if s > 0 else 1.0
        big = float(max(np.abs(v).max() if len(v) else 0.0, 2 * s)) + 1.0
        d = 0 if s >= 10 else 2
        def mk(c: str) -> Symbol:
            return _marker(c, 1.2)

        ranges = [Range(-big, -s, f"below -{s:.{d}f} {u} (one standard deviation)",
                        mk(_RESIDUAL_COLORS[0])),
                  Range(-s, s, f"within ±{s:.{d}f} {u}", mk(_RESIDUAL_COLORS[1])),
                  Range(s, big, f"above +{s:.{d}f} {u}", mk(_RESIDUAL_COLORS[2]))]
        return StyleSpec(name, t(f"{_kind_label(kind)}: cross-validation residuals"), geom,
                         "graduated", attr="residual", sld_attr="residual", ranges=ranges)
    if what == "combined_classes":
        krow = lay.distinct("class_key", "class", "color") if {
            "class_key", "class", "color"} <= set(lay.columns) else []
        ramp = class_ramp("", [str(r[2]) for r in krow])
        order = list(ramp.values())
        kcats = sorted(((str(r[0]), term(str(r[0]), str(r[1])), ramp[str(r[2]).upper()])
                        for r in krow), key=lambda r: -order.index(r[2]))
        return StyleSpec(name, t("Combined condition"), geom, "categorized", attr="class_key",
                         sld_attr="class_key",
                         categories=[Category(k, lab, _fill(col))
                                     for k, lab, col in kcats], opacity=0.9)
    if what == "zones":
        zrow = sorted(lay.distinct("order", "zone"), key=lambda r: (r[0] is None, r[0] or 0))
        zcats: list[Category] = []
        i = 0
        for _o, z in zrow:
            if str(z) == "no_action":
                col = NO_ACTION_COLOR
            else:
                col = ZONE_COLORS[i % len(ZONE_COLORS)]
                i += 1
            zcats.append(Category(str(z), term(str(z), str(z)),
                                 _hatch(col, "no", 0.5 if col != NO_ACTION_COLOR else 0.3,
                                        "dash")))
        return StyleSpec(name, t("Zones"), geom, "categorized", attr="zone", sld_attr="zone",
                         categories=zcats)
    if what == "repairs":
        depth = {"partial_above_bars": "f_diagonal", "partial_below_bars": "b_diagonal",
                 "full_depth": "diagonal_x"}
        present = [str(r[0]) for r in lay.distinct("depth_class")] if (
            "depth_class" in lay.columns) else []
        keys = [k for k in depth if k in present] + [k for k in present if k not in depth]
        expr = ('"repair_id"' if "dimensions" not in lay.columns
                else '"repair_id" || \'\\n\' || coalesce("dimensions", \'\')')
        labels = Labels(expr, "repair_id", "polygon", 7.5, "#004D38", priority=10, bold=True)
        if not keys:
            return StyleSpec(name, t("Repairs"), geom,
                             symbol=_hatch(OVERLAY["repair"], "b_diagonal", 0.6), labels=labels)
        return StyleSpec(name, t("Repairs"), geom, "categorized", attr="depth_class",
                         sld_attr="depth_class",
                         categories=[Category(k, term(k, k),
                                              _hatch(OVERLAY["repair"], depth.get(k, "cross"),
                                                     0.6)) for k in keys], labels=labels)
    if what == "pay_areas":
        lab = Labels('"bay"', "bay", "polygon", 6.0, OVERLAY["repair"], priority=1) if (
            "bay" in lay.columns) else None
        return StyleSpec(name, t("Pay areas (bays treated)"), geom,
                         symbol=_hatch(OVERLAY["repair"], "no", 0.5, "dash"), labels=lab)
    if what == GRID_SUFFIX:
        return StyleSpec(name, t(f"Survey grid nodes (snapping; {grid_unit})"), geom,
                         symbol=_marker("#7F7F7F", 0.9, "cross", outline="#7F7F7F",
                                        outline_mm=0.12), opacity=0.6)
    if what == "qa_flags":
        qcats = [Category(sv, term(f"severity.{sv}"),
                          _marker(OVERLAY["flag"], size, "circle", hollow=True, outline_mm=0.5))
                 for sv, size in (("error", 3.6), ("warning", 3.0), ("info", 2.4))]
        return StyleSpec(name, "QA findings", geom, "categorized", attr="severity",
                         sld_attr="severity", categories=qcats)
    return StyleSpec(name, t(what.replace("_", " ").capitalize()), geom,
                     symbol=_by_geometry(geom, OVERLAY["slab"]))


def split_level(name: str, levels: Sequence[str]) -> tuple[str, str]:
    """Split a layer name into its level and the rest (``"L2_repairs"`` -> L2, repairs)."""
    for lid in sorted(levels, key=len, reverse=True):
        if name.startswith(f"{lid}_"):
            return lid, name[len(lid) + 1:]
    return "", name


_GEOM = {"POINT": "point", "MULTIPOINT": "point", "LINESTRING": "line",
         "MULTILINESTRING": "line", "POLYGON": "polygon", "MULTIPOLYGON": "polygon"}


def _gpkg_layers(con: sqlite3.Connection) -> list[tuple[str, str, str]]:
    """Return (table, geometry column, geometry kind) of every feature table, in file order."""
    rows = con.execute(
        "SELECT c.table_name, g.column_name, g.geometry_type_name FROM gpkg_contents c "
        "JOIN gpkg_geometry_columns g ON g.table_name = c.table_name "
        "WHERE c.data_type = 'features' ORDER BY c.rowid").fetchall()
    return [(str(t), str(c), _GEOM.get(str(g).upper(), "polygon")) for t, c, g in rows]


def run_context(result: RunResult) -> tuple[list[str], dict[str, str], dict[str, str]]:
    """Return the level ids (site order), their titles, and the class set of each kind."""
    levels = list(result.levels)
    titles = {lid: str(getattr(lr.level.config, "name", "") or lid)
              for lid, lr in result.levels.items()}
    class_sets: dict[str, str] = {}
    for lr in result.levels.values():
        for name, surf in lr.surfaces.items():
            c = surf.classes
            if c is not None and len(c) and "class_set" in c.columns:
                class_sets.setdefault(name, str(c["class_set"].iloc[0]))
        for name, p in lr.points.items():
            pts = p.points
            if "class_set" in pts.columns and len(pts):
                class_sets.setdefault(name, str(pts["class_set"].iloc[0]))
    for s in result.site.surveys:
        cs = getattr(s.kind, "class_set", None)
        if isinstance(cs, str):
            class_sets.setdefault(s.kind.name, cs)
    return levels, titles, class_sets


def layer_specs(gpkg: Path, result: RunResult) -> dict[str, StyleSpec]:
    """Return the style of every feature layer of a run's GeoPackage, by layer name."""
    levels, titles, class_sets = run_context(result)
    units = {lid: lr.level.unit for lid, lr in result.levels.items()}
    out: dict[str, StyleSpec] = {}
    con = sqlite3.connect(gpkg)
    try:
        kinds_seen = 0
        for table, _gcol, geom in _gpkg_layers(con):
            cols = [str(r[1]) for r in con.execute(f'PRAGMA table_info("{table}")')]
            lay = _Layer(table, geom, cols, con)
            if table.startswith("readings_"):
                out[table] = _readings_spec(lay, table[len("readings_"):], titles, class_sets,
                                            kinds_seen)
                out[table].description = out[table].title
                kinds_seen += 1
                continue
            lid, what = split_level(table, levels)
            out[table] = _spec(lay, lid, what, titles, class_sets, units.get(lid, ""))
            out[table].description = _level_title(lid, out[table].title, titles)
    finally:
        con.close()
    return out


# ---------------------------------------------------------------- the survey grid layer


def grid_spacing_m(result: RunResult, lid: str) -> float:
    """Return the survey-grid spacing of a level in metres."""
    from geo_corrosion.units import LENGTH_TO_M

    lv = result.levels[lid].level
    return float(lv.config.grid.spacing) * LENGTH_TO_M[lv.unit]


def grid_layers(result: RunResult, max_nodes: int = 200_000) -> dict[str, Any]:
    """Return the ``<level>_grid`` layers: survey-grid nodes over each slab (site CRS).

    The nodes sit at multiples of the level's reading spacing in local grid coordinates,
    on the slab or within one spacing of it: the points a repair outline edited in a GIS
    snaps to.  A level whose grid would exceed ``max_nodes`` nodes gets none.
    """
    import geopandas as gpd
    import shapely

    out: dict[str, Any] = {}
    for lid, lr in result.levels.items():
        lv = lr.level
        sp = float(lv.config.grid.spacing)
        x0, y0, x1, y1 = lv.slab.bounds
        xs = np.arange(math.floor(x0 / sp) * sp, x1 + sp, sp)
        ys = np.arange(math.floor(y0 / sp) * sp, y1 + sp, sp)
        if len(xs) * len(ys) > max_nodes or not len(xs) or not len(ys):
            continue
        gx, gy = np.meshgrid(xs, ys)
        pts = shapely.points(gx.ravel(), gy.ravel())
        near = shapely.dwithin(pts, lv.slab, sp * 0.999)
        gx, gy = gx.ravel()[near], gy.ravel()[near]
        ex, ey = lv.grid.to_site(gx, gy)
        out[f"{lid}_{GRID_SUFFIX}"] = gpd.GeoDataFrame(
            {"level_id": lid, "x_local": np.round(gx, 6), "y_local": np.round(gy, 6),
             "grid_unit": lv.unit},
            geometry=shapely.points(np.asarray(ex), np.asarray(ey)), crs=result.site.crs)
    return out


# ---------------------------------------------------------------- writing


_DDL = ('CREATE TABLE IF NOT EXISTS "layer_styles" ("id" INTEGER PRIMARY KEY AUTOINCREMENT '
        'NOT NULL, "f_table_catalog" TEXT(256), "f_table_schema" TEXT(256), '
        '"f_table_name" TEXT(256), "f_geometry_column" TEXT(256), "styleName" TEXT(30), '
        '"styleQML" TEXT, "styleSLD" TEXT, "useAsDefault" BOOLEAN, "description" TEXT, '
        '"owner" TEXT(30), "ui" TEXT(30), "update_time" DATETIME DEFAULT '
        "(strftime('%Y-%m-%dT%H:%M:%fZ','now')))")


def write_layer_styles(gpkg: str | Path, result: RunResult) -> dict[str, StyleSpec]:
    """Add the survey-grid layers and a default style for every layer to a GeoPackage.

    The styles go to the standard ``layer_styles`` table (registered in ``gpkg_contents``
    as an attributes table, as QGIS and OGR register it), one row per feature layer, QML
    and SLD, ``useAsDefault`` true, written in one transaction; rows of ours from an
    earlier call are replaced.

    Returns
    -------
    dict of str to StyleSpec
        The styles written, by layer name.

    Raises
    ------
    ExportError
        If the GeoPackage cannot be written.
    """
    import pyogrio

    path = Path(gpkg)
    try:
        have = {str(n) for n, _t in pyogrio.list_layers(path)} if path.exists() else set()
        for name, gdf in grid_layers(result).items():
            if len(gdf) and name not in have:  # written once (a second call keeps it)
                try:
                    pyogrio.write_dataframe(gdf, path, layer=name, driver="GPKG",
                                            append=path.exists())
                except Exception as err:  # pyogrio raises its own errors
                    raise ExportError(f"cannot write layer {name!r} to {path}: {err}") from err
        specs = layer_specs(path, result)
        con = sqlite3.connect(path)
        try:
            geomcols = dict(con.execute(
                "SELECT table_name, column_name FROM gpkg_geometry_columns").fetchall())
            with con:  # one transaction
                con.execute(_DDL)
                con.execute("DELETE FROM layer_styles WHERE styleName = ?", (STYLE_NAME,))
                con.executemany(
                    "INSERT INTO layer_styles (f_table_catalog, f_table_schema, f_table_name, "
                    "f_geometry_column, styleName, styleQML, styleSLD, useAsDefault, "
                    "description, owner, ui) VALUES ('', '', ?, ?, ?, ?, ?, 1, ?, "
                    "'geo_corrosion', NULL)",
                    [(name, geomcols.get(name, "geom"), STYLE_NAME, to_qml(s), to_sld(s),
                      s.description or s.title) for name, s in specs.items()])
                if not con.execute("SELECT 1 FROM gpkg_contents WHERE table_name = "
                                   "'layer_styles'").fetchone():
                    con.execute("INSERT INTO gpkg_contents (table_name, data_type, "
                                "identifier, description, last_change) VALUES "
                                "('layer_styles', 'attributes', 'layer_styles', '', "
                                "strftime('%Y-%m-%dT%H:%M:%fZ','now'))")
                if con.execute("SELECT 1 FROM sqlite_master WHERE name = "
                               "'gpkg_ogr_contents'").fetchone():
                    con.execute("DELETE FROM gpkg_ogr_contents WHERE table_name = "
                                "'layer_styles'")
                    con.execute("INSERT INTO gpkg_ogr_contents (table_name, feature_count) "
                                "SELECT 'layer_styles', count(*) FROM layer_styles")
        finally:
            con.close()
    except (sqlite3.Error, OSError) as err:
        raise ExportError(f"cannot write the layer styles into {path}: {err}") from err
    return specs


# ---------------------------------------------------------------- rasters


def raster_qml(values: np.ndarray, *, direction: int, unit: str, title: str,
               grey: bool = False, lo: float | None = None, hi: float | None = None,
               opacity: float = 0.85) -> str:
    """Return the QML of a one-band raster: a pseudocolour ramp of the web map's colours.

    The ramp runs over the 2nd to 98th percentile of the valid values (or ``lo``..``hi``),
    light (least severe) to dark (most severe) as ``direction`` says; ``grey`` gives a
    white-to-grey ramp (the kriging variance).
    """
    v = values[np.isfinite(values)]
    if lo is None or hi is None:
        lo, hi = ((float(np.percentile(v, 2)), float(np.percentile(v, 98))) if len(v)
                  else (0.0, 1.0))
    if not hi > lo:
        hi = lo + 1.0
    stops = (("#FFFFFF", "#404040") if grey
             else (SEVERITY_RAMP if direction > 0 else SEVERITY_RAMP[::-1]))
    root = ET.Element("qgis", {"version": QGIS_VERSION, "styleCategories":
                               "AllStyleCategories", "hasScaleBasedVisibilityFlag": "0",
                               "minScale": "1e+08", "maxScale": "0"})
    cp = ET.SubElement(ET.SubElement(root, "customproperties"), "Option", type="Map")
    ET.SubElement(cp, "Option", name="geo_corrosion/title", value=title, type="QString")
    pipe = ET.SubElement(root, "pipe")
    rr = ET.SubElement(pipe, "rasterrenderer", {
        "type": "singlebandpseudocolor", "band": "1", "opacity": _num(opacity),
        "alphaBand": "-1", "classificationMin": _num(lo), "classificationMax": _num(hi),
        "nodataColor": ""})
    mmo = ET.SubElement(rr, "minMaxOrigin")
    for tag, text in (("limits", "None"), ("extent", "WholeRaster"),
                      ("statAccuracy", "Estimated"), ("cumulativeCutLower", "0.02"),
                      ("cumulativeCutUpper", "0.98"), ("stdDevFactor", "2")):
        ET.SubElement(mmo, tag).text = text
    sh = ET.SubElement(ET.SubElement(rr, "rastershader"), "colorrampshader", {
        "colorRampType": "INTERPOLATED", "classificationMode": "1", "clip": "0",
        "minimumValue": _num(lo), "maximumValue": _num(hi), "labelPrecision": "2"})
    u = unit_label(unit)
    d = _decimals([lo, hi]) if abs(hi - lo) >= 1 else 3
    for i, col in enumerate(stops):
        val = lo + (hi - lo) * i / (len(stops) - 1)
        ET.SubElement(sh, "item", {"alpha": "255", "value": _num(val), "color": col.lower(),
                                   "label": f"{val:.{min(d, 3) if d else 0}f} {u}".strip()})
    ET.SubElement(pipe, "brightnesscontrast", brightness="0", contrast="0", gamma="1")
    ET.SubElement(pipe, "huesaturation", saturation="0", grayscaleMode="0",
                  colorizeOn="0", invertColors="0")
    ET.SubElement(pipe, "rasterresampler", maxOversampling="2")
    ET.SubElement(root, "blendMode").text = "0"
    return "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n" + _xml_text(root)


def raster_styles(result: RunResult, rasters: Iterable[Path]) -> dict[Path, tuple[str, str]]:
    """Return (QML, legend title) of each surface GeoTIFF the GeoTIFF exporter wrote."""
    import rasterio

    levels, titles, _cs = run_context(result)
    out: dict[Path, tuple[str, str]] = {}
    for tif in rasters:
        tif = Path(tif)
        lid, what = split_level(tif.stem, levels)
        if not lid:
            continue
        try:
            with rasterio.open(tif) as src:
                a = src.read(1, masked=True).astype(float).filled(np.nan)
                unit = (src.units or ("",))[0] or ""
        except rasterio.errors.RasterioError as err:
            raise ExportError(f"{tif}: cannot be read for its style ({err}); run the "
                              "geotiff exporter again") from err
        if what.endswith("_variance"):
            kind = what[:-len("_variance")]
            title = f"{_kind_label(kind)}: kriging variance ({unit_label(unit)})"
            qml = raster_qml(a, direction=1, unit=unit, title=title, grey=True)
        elif what.endswith("_probability"):
            kind = what[:-len("_probability")]
            title = f"{_kind_label(kind)}: probability beyond its threshold"
            qml = raster_qml(a, direction=1, unit="", title=title, lo=0.0, hi=1.0)
        else:
            kind = what
            k = _kind(kind)
            title = f"{_kind_label(kind)}, kriged ({unit_label(unit)})"
            qml = raster_qml(a, direction=int(getattr(k, "severity_direction", 1) or 1),
                             unit=unit, title=title)
        out[tif] = (qml, _level_title(lid, title, titles))
    return out


def write_raster_styles(styles: dict[Path, tuple[str, str]]) -> list[Path]:
    """Write ``<name>.qml`` beside every GeoTIFF of :func:`raster_styles`; return the paths."""
    paths = []
    for tif, (qml, _title) in styles.items():
        dest = tif.with_suffix(".qml")
        def write(tmp: Path, q: str = qml) -> None:
            tmp.write_text(q, encoding="utf-8")

        atomic_write(dest, write, what="raster style")
        paths.append(dest)
    return paths
