"""The report: one self-contained HTML page (and a PDF printed from it by Chromium).

The job, the inputs, the criteria with their sources, the results, the findings, the
drawings, the quantities, the cautions and limitations.  Every user-supplied string is
HTML-escaped.  Reads results and the files already written; computes nothing.
"""

from __future__ import annotations

import base64
import html
import shutil
import subprocess
import tempfile
import warnings
from pathlib import Path

from .files import atomic_path, write_text
from ..cautions import CAUTIONS
from ..design.results import margin_sentence
from ..errors import OutputWarning

LIMITATIONS = (
    "Steady flow at the design flow only: no extended-period simulation, no transient analysis "
    "beyond the Joukowsky/Michaud estimates.",
    "Branched systems only: looped networks are refused, not solved.",
    "Ground levels from the DEM between profile points spaced as stated; features smaller than "
    "that, and DEM errors, are not seen.",
    "Pipe data marked 'from memory' in the catalogues must be checked against the standards; "
    "the built-in prices are invented.",
)

CSS = """
body{font:14px/1.45 sans-serif;margin:24px auto;max-width:1100px;color:#222}
h1{font-size:22px}h2{font-size:17px;border-bottom:1px solid #999;margin-top:28px}
table{border-collapse:collapse;margin:8px 0;font-size:12.5px}
td,th{border:1px solid #bbb;padding:3px 6px;text-align:left;vertical-align:top}
th{background:#eee}.error{color:#a00000;font-weight:bold}.warning{color:#8a5a00}
.caution{background:#fff4e0;border:1px solid #e0b060;padding:8px 12px}
img{max-width:100%;border:1px solid #ccc}
"""


def _table(headers, rows) -> str:
    esc = html.escape
    head = "".join(f"<th>{esc(str(h))}</th>" for h in headers)
    body = "".join("<tr>" + "".join(f"<td>{esc(str(c))}</td>" for c in r) + "</tr>" for r in rows)
    return f"<table><tr>{head}</tr>{body}</table>"


def _img(path: Path) -> str:
    data = base64.b64encode(path.read_bytes()).decode("ascii")
    return f"<img alt='{html.escape(path.name)}' src='data:image/png;base64,{data}'>"


def _uncertainty_html(data: dict) -> list[str]:
    """The section on DEM error and the elevations used (plan.json's uncertainty, elevations)."""
    esc = html.escape
    u = data.get("uncertainty")
    runs = u if isinstance(u, list) else ([dict(path="the line", **u)] if u else [])
    parts = []
    if runs:
        m = runs[0]["model"]
        parts.append(
            "<h2>How sure: DEM vertical error</h2>"
            f"<p>Elevation error modelled as Gaussian, standard deviation {m['sigma_m']} m, "
            f"correlated exponentially over {m['correlation_length_m']} m along the line "
            f"({esc(m['source'])}); {runs[0]['realisations']:,} realisations, seed "
            f"{runs[0]['seed']}. Pipes and flows are as designed; each realisation moves the "
            "ground, the source (unless its levels are absolute) and every tank.</p>")
        prices = data.get("confidence_prices") or []
        if prices:
            parts.append("<p>Price of confidence (pipe cost of the design held to each "
                         "confidence per point, design.confidence): " + ", ".join(
                             f"{p['confidence']:.0%}: "
                             + (f"{p['pipe_cost']:,.0f}" if p["pipe_cost"] is not None
                                else "no design") for p in prices) + ".</p>")
        for r in runs:
            if len(runs) > 1:
                parts.append(f"<h3>Path {esc(r['path'])}</h3>")
            parts.append(f"<p>Chance that some outlet is short of its minimum pressure: "
                         f"<b>{r['p_any_outlet_below_minimum']:.0%}</b>; "
                         + esc(margin_sentence(r["recommended_outlet_margin_m"],
                                               r["recommended_static_margin_m"],
                                               r.get("design_confidence"))) + ".</p>")
            parts.append(_table(["outlet", "P(residual below minimum)", "95 % fall of the residual [m]"],
                                [[o["name"], f"{o['p_below_minimum']:.1%}", o["residual_fall_95_m"]]
                                 for o in r["outlets"]]))
            risky = [c for c in r["crests"] if c["p_above_hgl"] > 0]
            if risky:
                parts.append(_table(["crest (air valve) chainage [m]", "P(above the HGL)"],
                                    [[c["chainage_m"], f"{c['p_above_hgl']:.1%}"] for c in risky]))
            over = [st for st in r["stretches"] if st["p_static_over_rating"] > 0]
            if over:
                parts.append(_table(["from [m]", "to [m]", "pipe", "P(static above rating)"],
                                    [[st["from_chainage_m"], st["to_chainage_m"], st["label"],
                                      f"{st['p_static_over_rating']:.1%}"] for st in over]))
    ev = data.get("elevations")
    if ev:
        parts.append("<h2>Elevations used</h2>" + f"<p>{esc(ev['source'])}</p>")
        if ev["pins"]:
            parts.append(_table(["surveyed point", "chainage [m]", "DEM offset [m]"],
                                [[p["name"], p["chainage_m"], p["offset_m"]] for p in ev["pins"]]))
        g = ev.get("gps_comparison")
        if g:
            parts.append(f"<p>GPS heights minus DEM at {g['vertices']} vertices: mean "
                         f"{g['mean_offset_m']} m, standard deviation {g['sd_offset_m']} m, "
                         f"largest {g['max_abs_offset_m']} m.</p>")
        if ev["by_stretch"] and ev["pins"]:
            parts.append(_table(["from [m]", "to [m]", "elevation source"],
                                [[b["from_chainage_m"], b["to_chainage_m"], b["elevation_source"]]
                                 for b in ev["by_stretch"]]))
    return parts


def report_html(data: dict, drawings: list[Path], bill_rows: list[list]) -> str:
    """The report page from plan.json's data, the drawings and the bill of quantities."""
    esc = html.escape
    p, inp, src = data["project"], data["inputs"], data["source"]
    network = data["schema"] == "gravplan.network/1"
    parts = [f"<!doctype html><html lang='en'><head><meta charset='utf-8'>"
             f"<title>{esc(p['name'])}</title><style>{CSS}</style></head><body>",
             f"<h1>{esc(p['name'])}</h1>",
             f"<p>Reference {esc(p.get('reference') or '-')}; {esc(p.get('engineer') or '')}. "
             f"{esc(p.get('notes') or '')}</p>",
             "<div class='caution'><b>Cautions.</b><ul>"
             + "".join(f"<li>{esc(c)}</li>" for c in data["cautions"]) + "</ul></div>",
             "<h2>The job</h2><p>A gravity line from the source to its outlets: the static head "
             "line, the hydraulic grade line at design flow and the pressure at every profile "
             "point; tanks, valves and pipe sizes chosen by the rules stated with each.</p>",
             "<h2>Inputs</h2>",
             _table(["item", "value"], [
                 ["route", inp["route"]], ["elevations", inp["elevation_source"]],
                 ["vertical datum", inp["vertical_datum"]], ["CRS", inp["crs"]],
                 ["point spacing [m]", inp["spacing_m"]], ["cover [m]", inp["cover_m"]],
                 ["source", f"{src['name']}: top water level {src['top_water_level_m']} m, low "
                            f"{src['low_water_level_m']} m, yield {src['yield_lps']} L/s"],
                 ["water", f"{data['water']['temperature_c']} degC, density "
                           f"{data['water']['density_kg_m3']} kg/m3"]]),
             "<h2>Criteria</h2><p>Defaults and their sources: docs/scenario.md.</p>",
             _table(["criterion", "value"], sorted((k, v) for k, v in inp["criteria"].items()))]
    s = data["summary"]
    parts.append("<h2>Results</h2>" + _table(["quantity", "value"], sorted(s.items())))
    links = data["links"] if network else [dict(name="line", **data)]
    for lk in links:
        if network:
            parts.append(f"<h3>{esc(lk['name'])}</h3>")
        if lk["outlets"]:
            parts.append(_table(["outlet", "chainage [m]", "flow [L/s]", "residual [m]", "min [m]",
                                 "ok"], [[o["name"], o["chainage_m"], o["flow_lps"],
                                          o["residual_pressure_head_m"], o["min_pressure_head_m"],
                                          o["ok"]] for o in lk["outlets"]]))
        if lk["break_pressure_tanks"]:
            parts.append(_table(["tank", "chainage [m]", "water level [m]", "why"],
                                [[t["name"], t["chainage_m"], t["water_level_m"], t.get("rule", "")]
                                 for t in lk["break_pressure_tanks"]]))
        if lk["stretches"]:
            parts.append(_table(["from [m]", "to [m]", "pipe", "length [m]", "static max [m]",
                                 "rating [m]", "cost"],
                                [[st["from_chainage_m"], st["to_chainage_m"], st["label"],
                                  st["length_m"], st["max_static_head_m"],
                                  st["rating_head_m"], st["cost"]] for st in lk["stretches"]]))
        if lk["features"]:
            parts.append(_table(["valve", "chainage [m]", "size [mm]", "rule", "source"],
                                [[f["kind"].replace("_", " "), f["chainage_m"], f["size_mm"],
                                  f["rule"], f["source"]] for f in lk["features"]]))
    parts += _uncertainty_html(data)
    if data.get("sizing"):
        z = data["sizing"]
        parts.append(f"<p>Sizing: {esc(z['summary'])}.</p>")
    parts.append("<h2>Findings</h2>" + "".join(
        f"<p class='{esc(f['severity'])}'>{esc(f['severity'])}: {esc(f['message'])}"
        + (f"<br><i>{esc(f['remedy'])}</i>" if f["remedy"] else "") + "</p>"
        for f in data["findings"]))
    parts.append("<h2>Drawings</h2>" + "".join(_img(d) for d in drawings))
    parts.append("<h2>Bill of quantities</h2>" + _table(
        ["item", "description", "quantity", "unit", "unit cost", "total"], bill_rows))
    parts.append("<h2>Limitations</h2><ul>" + "".join(f"<li>{esc(x)}</li>" for x in LIMITATIONS)
                 + "</ul>")
    parts.append(f"<p><small>{esc(data['tool']['name'])} {esc(data['tool']['version'])}; "
                 f"{esc(CAUTIONS[-1])}</small></p></body></html>")
    return "\n".join(parts)


def chromium() -> str | None:
    """The Chromium executable, if this machine has one (it prints the PDF)."""
    return shutil.which("chromium") or shutil.which("chromium-browser")


def write_report(data: dict, drawings: list[Path], bill_rows: list[list], folder: Path) -> dict:
    """Write report.html, and report.pdf when Chromium is available."""
    folder = Path(folder)
    out = {"report.html": write_text(folder / "report.html", report_html(data, drawings, bill_rows))}
    exe = chromium()
    if exe is None:
        warnings.warn("report.pdf not written: it is printed by Chromium, which this machine "
                      "does not have (install the chromium package); report.html holds the "
                      "same report", OutputWarning, stacklevel=2)
        return out
    # the browser's profile lives in the output folder, so that a killed run leaves it
    # where the next run clears it (see planner.report.files.output_set)
    with tempfile.TemporaryDirectory(prefix=".browser-", dir=folder) as profile, \
            atomic_path(folder / "report.pdf", suffix=".pdf") as tmp:
        subprocess.run([exe, "--headless", "--no-sandbox", "--disable-gpu",
                        "--disable-background-networking", "--disable-component-update",
                        "--disable-sync", "--no-first-run", "--disable-quic",
                        "--host-resolver-rules=MAP * ~NOTFOUND", f"--user-data-dir={profile}",
                        "--no-pdf-header-footer", f"--print-to-pdf={tmp}",
                        (folder / "report.html").resolve().as_uri()],
                       check=True, capture_output=True, timeout=120)
    out["report.pdf"] = folder / "report.pdf"
    return out
