"""The owner's portfolio web map: one offline page, a marker and popup per site.

Leaflet is the project's vendored copy, inlined with the site web map's own helper
(:func:`geo_corrosion.exporters.webmap.assets.leaflet_assets`), so the page needs no
network when it opens.  There is no basemap (a tile server would be a request); the sites'
slab outlines are drawn under the markers.  Each popup names the site, its status, levels,
deck area, repairs, bid quantities and estimate, and links to the site's own web map by a
relative path (``sites/<site-id>/webmap.html``), so the folder can be moved or zipped
whole.  Every text from a site file is put into the page as JSON (``<`` escaped) and
shown with ``textContent``, never as markup.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import TYPE_CHECKING, Any

from geo_corrosion._io import atomic_write
from geo_corrosion.cautions import CAUTIONS
from geo_corrosion.exporters.webmap.assets import LEAFLET_VERSION, leaflet_assets
from geo_corrosion.quantities import bid_decimals
from geo_corrosion.vocabulary import unit_label

if TYPE_CHECKING:
    from geo_corrosion.exporters.portfolio.summary import PortfolioTables

__all__ = ["PORTFOLIO_MAP", "portfolio_map_html", "write_portfolio_map"]

PORTFOLIO_MAP = "portfolio.html"

_CSS = """
html, body { height: 100%; margin: 0; font: 14px/1.35 system-ui, sans-serif; color: #222; }
#gc-wrap { display: flex; height: 100%; }
#gc-side { width: 320px; overflow-y: auto; padding: 10px 14px; border-right: 1px solid #ccc;
           box-sizing: border-box; background: #fafafa; }
#gc-map { flex: 1; background: #eef1f4; }
#gc-side h1 { font-size: 17px; margin: 4px 0 8px; }
#gc-side .gc-count { color: #555; margin-bottom: 8px; }
#gc-side ul { list-style: none; padding: 0; margin: 0; }
#gc-side li { padding: 6px 0; border-bottom: 1px solid #e3e3e3; cursor: pointer; }
#gc-side li .gc-st { font-size: 12px; padding: 0 5px; border-radius: 3px; color: #fff; }
.gc-done { background: #2b6cb0; } .gc-failed { background: #c53030; }
#gc-side .gc-note { font-size: 11px; color: #666; margin-top: 12px; }
.gc-pop h3 { margin: 0 0 4px; font-size: 15px; } .gc-pop table { border-collapse: collapse; }
.gc-pop td { padding: 1px 6px 1px 0; vertical-align: top; } .gc-pop .gc-msg { color: #c53030;
  max-width: 300px; white-space: pre-wrap; }
"""

_JS = r"""
(function () {
  const data = JSON.parse(document.getElementById('gc-data').textContent);
  const map = L.map('gc-map', {zoomSnap: 0.25, preferCanvas: false});
  L.control.scale({imperial: true, metric: true}).addTo(map);
  const el = (tag, cls, text) => { const e = document.createElement(tag);
    if (cls) e.className = cls; if (text !== undefined) e.textContent = text; return e; };
  // the view first: Leaflet draws vector layers only on a map that has one
  const placed = data.sites.filter(s => s.lat !== null && s.lon !== null);
  if (placed.length > 1) {
    map.fitBounds(L.latLngBounds(placed.map(s => [s.lat, s.lon])),
                  {padding: [60, 60], maxZoom: 17});
  } else if (placed.length === 1) {
    map.setView([placed[0].lat, placed[0].lon], 16);
  } else { map.setView([0, 0], 2); }
  L.geoJSON(data.outlines, {style: {color: '#4a5568', weight: 1, fillOpacity: 0.15},
    interactive: false}).addTo(map);
  const markers = [];
  const list = document.getElementById('gc-list');
  function popup(s) {
    const d = el('div', 'gc-pop');
    d.appendChild(el('h3', '', s.name));
    const t = el('table'); d.appendChild(t);
    const row = (k, v) => { const tr = el('tr'); tr.appendChild(el('td', '', k));
      tr.appendChild(el('td', '', v)); t.appendChild(tr); };
    row('status', s.status);
    if (s.levels) row('levels', s.levels);
    if (s.deck_area) row('deck area', s.deck_area);
    if (s.repairs !== null && s.repairs !== undefined) row('repairs', String(s.repairs));
    if (s.quantities.length) row('bid quantities', 'with contingency');
    for (const q of s.quantities) row(q[0], q[1]);
    for (const e of s.estimate) row('estimate', e);
    if (s.message) d.appendChild(el('div', 'gc-msg', s.message));
    if (s.href) { const a = el('a', 'gc-link', 'open the site map');
      a.href = s.href; d.appendChild(a); }
    return d;
  }
  for (const s of data.sites) {
    const li = el('li'); li.dataset.site = s.id;
    li.appendChild(el('span', 'gc-st gc-' + s.status, s.status));
    li.appendChild(document.createTextNode(' ' + s.name));
    list.appendChild(li);
    if (s.lat === null || s.lon === null) continue;
    const m = L.circleMarker([s.lat, s.lon], {radius: 9, weight: 2, color: '#fff',
      fillColor: s.status === 'done' ? '#2b6cb0' : '#c53030', fillOpacity: 0.95});
    m.bindPopup(() => popup(s), {maxWidth: 360});
    m.bindTooltip(s.name);
    m.addTo(map); m.gcSite = s; markers.push(m);
    li.addEventListener('click', () => { map.setView([s.lat, s.lon],
      Math.max(map.getZoom(), 15)); m.openPopup(); });
  }
  window.__geoCorrosion = {ready: true, portfolio: true,
    markers: () => markers.map(m => ({id: m.gcSite.id, status: m.gcSite.status,
      href: m.gcSite.href, lat: m.getLatLng().lat, lon: m.getLatLng().lng})),
    popup: (id) => { const m = markers.find(x => x.gcSite.id === id); m.openPopup();
      const e = m.getPopup().getElement(), a = e.querySelector('a.gc-link');
      return {text: e.innerText, href: a ? a.getAttribute('href') : null}; }};
})();
"""


def _num(v: Any) -> float | None:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return None
    return f if math.isfinite(f) else None


def _fmt(v: float, unit: str) -> str:
    """Return a quantity as the schedule bids it (its unit's decimals) with the owner's unit."""
    return f"{v:,.{bid_decimals(unit)}f} {unit_label(unit)}"


def _site_entries(t: PortfolioTables) -> list[dict[str, Any]]:
    """One JSON-able record per site for the page."""
    out = []
    fixed = {"site_id", "site_name", "level_id", "level_name", "status", "message",
             "deck_area_m2", "deck_area_ft2", "repairs_count"}
    item_cols = [str(c) for c in t.levels.columns
                 if c not in fixed and not str(c).startswith("estimate_") and c in t.sites]
    for s in t.sites.to_dict("records"):
        sid = str(s["site_id"])
        metric = s.get("report_units") == "metric"
        area = _num(s.get("deck_area_m2" if metric else "deck_area_ft2"))
        quantities: list[tuple[str, str]] = []
        for col in item_cols:  # the whole site's bid quantities (its ``ALL`` rows)
            total = _num(s.get(col))
            if total:
                item, _, unit = col.rpartition("_")
                quantities.append((item, _fmt(total, unit)))
        estimate = [f"{_num(v):,.2f} {str(k).removeprefix('estimate_')}"
                    for k, v in s.items()
                    if str(k).startswith("estimate_") and _num(v) is not None]
        href = str(s.get("webmap") or "") if s.get("status") == "done" else ""
        out.append({"id": sid, "name": str(s["site_name"]), "status": str(s["status"]),
                    "message": str(s.get("message") or ""),
                    "lat": _num(s.get("latitude_deg")), "lon": _num(s.get("longitude_deg")),
                    "levels": str(s.get("levels") or ""),
                    "deck_area": "" if area is None else _fmt(area, "m2" if metric else "ft2"),
                    "repairs": None if _num(s.get("repairs_count")) is None
                    else int(s["repairs_count"]),
                    "quantities": quantities, "estimate": estimate, "href": href})
    return out


def _json_script(obj: Any) -> str:
    """JSON for a ``<script type="application/json">``: ``<``, ``>`` and ``&`` escaped."""
    text = json.dumps(obj, ensure_ascii=False, allow_nan=False)
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def portfolio_map_html(t: PortfolioTables, *, title: str = "Portfolio of surveyed decks") -> str:
    """Return the portfolio web map page (self-contained, no network at open)."""
    import html

    js, css, licence = leaflet_assets()
    sites = _site_entries(t)
    outlines: dict[str, Any] = (json.loads(t.outlines.to_json(drop_id=True))
                                if len(t.outlines) else
                                {"type": "FeatureCollection", "features": []})
    data = {"sites": sites, "outlines": outlines}
    n_done = sum(s["status"] == "done" for s in sites)
    note = " ".join(html.escape(c) for c in CAUTIONS[:1])
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{html.escape(title)}</title>
<!-- Leaflet {LEAFLET_VERSION}, inlined; its licence:
{licence}
-->
<style>{css}</style>
<style>{_CSS}</style>
</head><body>
<div id="gc-wrap"><div id="gc-side"><h1>{html.escape(title)}</h1>
<div class="gc-count">{len(sites)} site(s): {n_done} done, {len(sites) - n_done} failed</div>
<ul id="gc-list"></ul>
<div class="gc-note">Click a marker for the site's quantities and a link to its own map.
{note}</div></div>
<div id="gc-map"></div></div>
<script type="application/json" id="gc-data">{_json_script(data)}</script>
<script>{js}</script>
<script>{_JS}</script>
</body></html>
"""


def write_portfolio_map(out_dir: Path, t: PortfolioTables) -> Path:
    """Write ``portfolio.html`` into the portfolio folder (atomically)."""
    text = portfolio_map_html(t)
    return atomic_write(out_dir / PORTFOLIO_MAP,
                        lambda tmp: tmp.write_text(text, encoding="utf-8"),
                        what="portfolio web map")
