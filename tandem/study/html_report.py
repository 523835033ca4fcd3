"""`report.html`: a study a reader opens in a browser, phone or print.

One self-contained file: the question, the conditions, the cautions, the ranked design table,
every figure inlined as SVG (the same figures the folder holds as PNG, not drawn twice), the
provenance and the command that re-runs it. No script, no external resource: it renders the
same offline, in a mail attachment or on paper.
"""

from __future__ import annotations

import html
import re

from tandem.output.report import CAUTION
from tandem.study.run import StudyResult
from tandem.study.tables import _cell, columns

_STYLE = """
body { font: 15px/1.45 system-ui, -apple-system, "Segoe UI", sans-serif; margin: 0 auto;
       max-width: 1100px; padding: 0 1rem 3rem; color: #1a1a1a; }
h1 { font-size: 1.5rem; margin: 1.2rem 0 0.3rem; }
h2 { font-size: 1.15rem; margin: 1.6rem 0 0.4rem; border-bottom: 1px solid #ddd; }
.question { font-size: 1.05rem; color: #333; }
.caution { background: #fff6e0; border-left: 4px solid #e0a000; padding: 0.5rem 0.8rem; }
dl { display: grid; grid-template-columns: max-content 1fr; gap: 0.2rem 1rem; }
dt { color: #555; } dd { margin: 0; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; font-variant-numeric: tabular-nums; font-size: 0.9rem; }
th, td { padding: 0.25rem 0.5rem; border-bottom: 1px solid #e5e5e5; white-space: nowrap; }
th { text-align: left; background: #f5f5f5; position: sticky; top: 0; }
td.num { text-align: right; }
figure { margin: 1rem 0; } figcaption { color: #444; font-size: 0.9rem; }
figure svg { width: 100%; height: auto; max-width: 900px; display: block; }
code { background: #f3f3f3; padding: 0 0.25rem; overflow-wrap: anywhere; }
@media print { body { max-width: none; } figure { break-inside: avoid; } .scroll { overflow: visible; } }
"""

#: figure file name prefixes → what the figure shows, in the order the report shows them
_CAPTIONS = (("compare-pairs", "The candidate pairs side by side: efficiency against front "
                               "thickness at each pair's best front gap (star: best design; "
                               "circle, where one exists: current-matched thickness)"),
             ("match-", "Current matching: subcell currents against front thickness, and the "
                        "subcells' absorptance over the spectrum"),
             ("losses-", "Where the incident power goes (loss waterfall at the operating point)"),
             ("photons-", "Photon budget of the layer stack: what each layer absorbs"),
             ("gap-map", "Efficiency over both gaps for step absorbers (the radiative-limit "
                         "map), the candidates marked"))


def _caption(name: str, titles: dict[str, str]) -> str:
    """A figure's caption from its file name; ``titles`` names a pair's file stem
    (``front-over-back``) by its absorbers' names, as the figures themselves do."""
    stem = name.rsplit(".", 1)[0]
    for prefix, text in _CAPTIONS:
        if stem.startswith(prefix):
            what = stem[len(prefix):]
            what = titles.get(what, what.replace("-over-", " over "))
            return f"{text}{': ' + what if what else ''}."
    return stem


def _figure_order(item) -> tuple:
    """Each pair's current matching, then the loss waterfalls, stacks, the gap map."""
    name = item[0]
    rank = next((i for i, (prefix, _) in enumerate(_CAPTIONS) if name.startswith(prefix)),
                len(_CAPTIONS))
    return rank, name


def _inline_svg(svg: str, n: int) -> str:
    """The SVG element alone, scaled to its box, its ids prefixed so that many can share a
    page (matplotlib names clip paths and markers alike in every figure)."""
    svg = svg[svg.index("<svg"):]
    svg = re.sub(r"<metadata>.*?</metadata>", "", svg, count=1, flags=re.S)  # RDF boilerplate
    svg = re.sub(r'\bid="', f'id="f{n}-', svg)
    svg = re.sub(r'url\(#', f'url(#f{n}-', svg)
    svg = re.sub(r'href="#', f'href="#f{n}-', svg)
    # the viewBox keeps the shape; CSS sets the width (no fixed pt size on a phone)
    return re.sub(r'<svg([^>]*?)\swidth="[^"]*"\s+height="[^"]*"', r'<svg\1', svg, count=1)


def html_report(study: StudyResult, svgs: dict[str, str], manifest: dict, rerun: str) -> str:
    """The study as one HTML page (see the module docstring)."""
    e = html.escape
    sc = study.scenario
    cols = columns(study)
    head = "".join(f"<th>{e(c.label)}</th>" for c in cols)
    body = []
    for row in study.rows:
        cells = []
        for c in cols:
            value = row.get(c.key)
            number = isinstance(value, (int, float)) and not isinstance(value, bool)
            cells.append(f'<td class="{"num" if number else "text"}" data-key="{e(c.key)}">'
                         f"{e(_cell(row, c.key, c.fmt))}</td>")
        body.append("<tr>" + "".join(cells) + "</tr>")
    conditions = [("spectrum", f"{study.spectrum_name}, {study.irradiance:.2f} W/m²"),
                  ("cell temperature", f"{sc.temperature_K:g} K"),
                  ("ranked by", f"{sc.terminals}-terminal efficiency"),
                  ("windows", f"front thickness and gap within {sc.tolerance_pct:g} % abs of the best")]
    if study.sky:
        conditions.append(("energy", f"{study.sky['source']}: {study.sky['steps']:,} steps, "
                                     f"{study.sky['insolation_kWh_m2']:.1f} kWh/m² on the module plane"))
    if "spread" in sc.data:
        s = sc.data["spread"]
        conditions.append(("fabrication spread", f"front gap σ {s.get('gap_sigma_eV', 0.01):g} eV "
                                                 f"(pairs), thickness σ {s.get('thickness_sigma_pct', 5.0):g} %, "
                                                 f"{s.get('samples', 1000)} devices, seed {s.get('seed', 1)}"))
    titles = {f"{f}-over-{b}": r.design.title for (f, b), r in study.results.items()}
    titles.update((key, m.stack.title) for key, m in study.stacks.items())
    figures = "\n".join(
        f'<figure id="figure-{n}">{_inline_svg(svg, n)}<figcaption>{e(_caption(name, titles))} '
        f"(<code>figures/{e(name)}</code>)</figcaption></figure>"
        for n, (name, svg) in enumerate(sorted(svgs.items(), key=_figure_order), 1))
    tool = manifest.get("tool", {})
    skipped = "".join(f"<li>{e(s)}</li>" for s in study.skipped)
    return f"""<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="tandem {e(str(tool.get('version', '')))}">
<title>{e(sc.data['title'])}</title>
<style>{_STYLE}</style>
</head>
<body>
<h1>{e(sc.data['title'])}</h1>
<p class="question">{e(sc.data['question'])}</p>
<p class="caution">{e(CAUTION)} Anything touching electrical installation defers to local codes and licensed practice.</p>
<h2>Conditions</h2>
<dl>{''.join(f'<dt>{e(k)}</dt><dd>{e(v)}</dd>' for k, v in conditions)}</dl>
<h2>Ranked designs</h2>
<div class="scroll"><table id="design-table"><thead><tr>{head}</tr></thead>
<tbody>{''.join(body)}</tbody></table></div>
{f'<p>Notes:</p><ul>{skipped}</ul>' if skipped else ''}
<h2>Figures</h2>
{figures or '<p>Written without figures.</p>'}
<h2>Provenance</h2>
<dl><dt>tool</dt><dd>tandem {e(str(tool.get('version', '')))}</dd>
<dt>created (UTC)</dt><dd>{e(str(manifest.get('created_utc', '')))}</dd>
<dt>inputs SHA-256</dt><dd><code>{e(str(manifest.get('integrity', {}).get('inputs_sha256', '')))}</code></dd>
<dt>re-run</dt><dd><code>{e(rerun)}</code></dd></dl>
<p>Every input is held as data in <code>manifest.json</code>; the tables are also in
<code>design-table.csv</code>, <code>.md</code> and <code>.tex</code>.</p>
</body>
</html>
"""
