"""One self-contained HTML page from the report document: inline CSS, inline SVG, no network resources.

Sections (each a ``<section id=...>``): ``summary``, ``tools`` (per-tool table), ``latency`` (one SVG
histogram per tool), ``findings`` (with replay commands and a text filter), ``coverage`` (keyword
coverage). A Content-Security-Policy allows nothing from outside the page.
"""

from __future__ import annotations

import json
from html import escape
from typing import Any

from feeler.report.formats import ms, totals_line

__all__ = ["SECTIONS", "render_html"]

SECTIONS = ("summary", "tools", "latency", "findings", "coverage")

_CSP = "default-src 'none'; style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:"
_CSS = """
body{font:14px/1.45 system-ui,sans-serif;margin:2rem auto;max-width:72rem;padding:0 1rem;color:#1b1f24;background:#fff}
h1{font-size:1.5rem}h2{font-size:1.2rem;border-bottom:1px solid #d0d7de;padding-bottom:.2rem;margin-top:2rem}
table{border-collapse:collapse;width:100%}th,td{border:1px solid #d0d7de;padding:.25rem .5rem;text-align:right}
th:first-child,td:first-child{text-align:left}th{background:#f6f8fa}
.error{color:#b42318;font-weight:600}.warning{color:#9a6700;font-weight:600}.muted{color:#57606a}
.cards{display:flex;gap:1rem;flex-wrap:wrap}.card{border:1px solid #d0d7de;border-radius:6px;padding:.5rem 1rem}
.card b{display:block;font-size:1.4rem}code,pre{background:#f6f8fa;border-radius:4px;padding:.1rem .3rem}
pre{padding:.5rem;white-space:pre-wrap;word-break:break-all}.charts{display:flex;flex-wrap:wrap;gap:1rem}
figure{margin:0;border:1px solid #d0d7de;border-radius:6px;padding:.5rem}figcaption{font-weight:600}
li.finding{margin:.6rem 0}input{font:inherit;padding:.2rem .4rem;width:20rem}
"""
_SCRIPT = """
(function () {
  var box = document.getElementById('finding-filter');
  var items = document.querySelectorAll('#findings li.finding');
  box.addEventListener('input', function () {
    var q = box.value.toLowerCase();
    items.forEach(function (li) { li.hidden = q !== '' && li.textContent.toLowerCase().indexOf(q) < 0; });
  });
  document.documentElement.setAttribute('data-ready', String(items.length));
})();
"""


def _e(value: Any) -> str:
    return escape(str(value), quote=True)


def _summary(doc: dict[str, Any]) -> str:
    t = doc["totals"]
    server = doc.get("server") or {}
    shard = doc.get("shard")
    cards = [
        ("findings", t["findings"]), ("errors", t["errors"]), ("warnings", t["warnings"]),
        ("calls", t["calls"]), ("tools", t["tools"]), ("seconds", f"{doc.get('durationSeconds', 0):.1f}"),
    ]  # fmt: skip
    facts = [
        f"target <code>{_e(doc['target'])}</code>",
        f"server {_e(server.get('name', '?'))} {_e(server.get('version', ''))}",
        f"protocol version {_e(doc.get('protocolVersion') or '?')} ({_e(doc.get('era') or '?')})",
        f"{_e(doc['startedAt'])} to {_e(doc['finishedAt'])}",
    ]
    if shard:
        facts.append(f"shard {shard['index']}/{shard['count']}")
    if t["restarts"]:
        facts.append(f"{t['restarts']} server restarts")
    camp = doc.get("campaign")
    if camp:
        facts.append(f"campaign: {camp.get('rounds', 0)} rounds, budget {camp.get('budgetSeconds', 0):.0f} s, resumed {camp.get('resumed', 0)} times")
    return (
        '<section id="summary"><h2>Summary</h2>'
        f"<p><strong>{_e(totals_line(doc))}</strong></p>"
        '<div class="cards">' + "".join(f'<div class="card"><b>{_e(v)}</b>{_e(k)}</div>' for k, v in cards) + "</div>"
        '<p class="muted">' + " · ".join(facts) + "</p></section>"
    )


def _tools(doc: dict[str, Any]) -> str:
    rows = []
    for tool in doc["tools"]:
        if tool.get("skipped"):
            rows.append(f"<tr><td>{_e(tool['name'])}</td><td colspan=9 class=muted>skipped: {_e(tool['skipped'])}</td></tr>")
            continue
        go, nogo, lat, cov = tool["go"], tool["noGo"], tool["latency"], tool.get("coverage")
        cells = [
            tool["calls"], f"{go['entered']} / {go['stopped']} of {go['calls']}",
            f"{nogo['stoppedByCode']} / {nogo['stoppedByIsError']} / {nogo['entered']} of {nogo['calls']}",
            tool["probes"], tool["findings"], ms(lat["p50"]), ms(lat["p95"]), ms(lat["p99"]),
            f"{cov['gaugedBothEnds']}/{cov['keywords']}" if cov else "-",
        ]  # fmt: skip
        rows.append(f"<tr><td>{_e(tool['name'])}</td>" + "".join(f"<td>{_e(c)}</td>" for c in cells) + "</tr>")
    return (
        '<section id="tools"><h2>Tools</h2><table><thead><tr><th>tool</th><th>calls</th>'
        "<th>go entered / stopped</th><th>no-go stopped by -32602 / by isError / entered</th><th>probes</th>"
        "<th>findings</th><th>p50</th><th>p95</th><th>p99</th><th>keywords gauged at both ends</th></tr></thead>"
        "<tbody>" + "".join(rows) + "</tbody></table></section>"
    )


def _chart(tool: dict[str, Any]) -> str:
    buckets = tool["latency"]["buckets"]
    peak = max((b["count"] for b in buckets), default=0) or 1
    width, height, bar = 16 * len(buckets) + 40, 140, 14
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{width}" height="{height}" role="img" aria-label="latency of {_e(tool["name"])}">']
    for i, b in enumerate(buckets):
        h = round(100 * b["count"] / peak)
        x = 30 + 16 * i
        label = "&gt;30s" if b["le"] is None else (f"{b['le'] * 1000:g}ms" if b["le"] < 1 else f"{b['le']:g}s")
        parts.append(f'<rect x="{x}" y="{110 - h}" width="{bar}" height="{h}" fill="#0969da"><title>&le; {label}: {b["count"]} calls</title></rect>')
        if i % 3 == 0:
            parts.append(f'<text x="{x}" y="125" font-size="9" fill="#57606a">{label}</text>')
    parts.append(f'<text x="0" y="12" font-size="10" fill="#57606a">{peak}</text><line x1="28" y1="110" x2="{width}" y2="110" stroke="#8c959f"/>')
    parts.append("</svg>")
    lat = tool["latency"]
    caption = f"{_e(tool['name'])} <span class=muted>{lat['count']} answers · p50 {ms(lat['p50'])} · p95 {ms(lat['p95'])} · p99 {ms(lat['p99'])}</span>"
    return f"<figure><figcaption>{caption}</figcaption>{''.join(parts)}</figure>"


def _latency(doc: dict[str, Any]) -> str:
    charts = [_chart(t) for t in doc["tools"] if t["latency"]["count"]]
    body = "".join(charts) or '<p class="muted">no answered calls</p>'
    return f'<section id="latency"><h2>Latency per tool</h2><div class="charts">{body}</div></section>'


def _findings(doc: dict[str, Any]) -> str:
    items = []
    for f in sorted(doc["findings"], key=lambda f: f["severity"] != "error"):  # errors first, as in Markdown
        where = f"<code>{_e(f['tool'])}</code>" if f.get("tool") else "the server"
        extra = ""
        if f.get("arguments") is not None:
            extra += f"<pre>{_e(json.dumps(f['arguments'], ensure_ascii=False)[:2000])}</pre>"
        if f.get("replayCommand"):
            extra += f"<div>replay: <code>{_e(f['replayCommand'])}</code></div>"
        count = f" <span class=muted>seen {f['count']} times</span>" if f.get("count", 1) > 1 else ""
        items.append(
            f'<li class="finding"><span class="{_e(f["severity"])}">{_e(f["severity"])}</span> '
            f"<code>{_e(f['check'])}</code> on {where} ({_e(f['kind'])}): {_e(f['message'])}{count}{extra}</li>"
        )
    body = "<ul>" + "".join(items) + "</ul>" if items else '<p class="muted">no findings</p>'
    return (
        '<section id="findings"><h2>Findings</h2>'
        '<p><label>filter <input id="finding-filter" type="search" placeholder="tool, check, text"></label></p>'
        f"{body}</section>"
    )


def _coverage(doc: dict[str, Any]) -> str:
    rows = []
    for tool in doc["tools"]:
        cov = tool.get("coverage")
        if not cov:
            continue
        gaps = "".join(
            f"<li><code>{_e(g['keywordLocation'])}</code>: {'go' if g['go'] else 'no go case'}, "
            f"{'no-go' if g['noGo'] else 'no no-go case'}{(' (' + _e(g['reason']) + ')') if g.get('reason') else ''}</li>"
            for g in cov["gaps"]
        )
        rows.append(
            f"<h3>{_e(tool['name'])}: {cov['gaugedBothEnds']}/{cov['keywords']} keywords gauged at both ends</h3>"
            + (f"<ul>{gaps}</ul>" if gaps else "")
        )
    body = "".join(rows) or '<p class="muted">no keyword coverage recorded</p>'
    return f'<section id="coverage"><h2>Keyword coverage</h2>{body}</section>'


def render_html(doc: dict[str, Any]) -> str:
    """The whole page as one string."""
    title = f"feeler {doc['command']}: {doc['target']}"
    body = _summary(doc) + _tools(doc) + _latency(doc) + _findings(doc) + _coverage(doc)
    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
        f'<meta http-equiv="Content-Security-Policy" content="{_CSP}">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(title)}</title><style>{_CSS}</style></head><body>"
        f"<h1>{_e(title)}</h1>{body}<script>{_SCRIPT}</script></body></html>\n"
    )
