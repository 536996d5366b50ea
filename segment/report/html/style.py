"""The site's inline CSS and JS (no file, font or script is fetched from anywhere)."""

from __future__ import annotations

CSS = """
:root { --ink:#1d2430; --muted:#5b6472; --line:#d9dee6; --bg:#f7f8fa; --card:#fff; --warn:#b03030;
        --amber:#a66a00; --c0:#3b6ea5; --c1:#d1793b; --c2:#4a9a5b; --c3:#8a5aa8; }
* { box-sizing: border-box; }
body { margin: 0; font: 14px/1.45 system-ui, -apple-system, "Segoe UI", sans-serif; color: var(--ink);
       background: var(--bg); }
header { padding: 14px 24px; background: #233247; color: #fff; }
header h1 { margin: 0 0 4px; font-size: 20px; }
header a { color: #cfe0ff; }
header .sub { color: #c9d3e0; font-size: 13px; word-break: break-all; }
main { padding: 16px 24px; }
h2 { font-size: 16px; margin: 22px 0 8px; }
.cards { display: flex; flex-wrap: wrap; gap: 10px; }
.card { background: var(--card); border: 1px solid var(--line); border-radius: 6px; padding: 8px 12px;
        min-width: 120px; }
.card b { display: block; font-size: 20px; }
.card.bad b { color: var(--warn); }
.plots { display: grid; grid-template-columns: repeat(auto-fit, minmax(420px, 1fr)); gap: 12px; }
figure { margin: 0; background: var(--card); border: 1px solid var(--line); border-radius: 6px; padding: 8px; }
figure svg { width: 100%; height: auto; }
figcaption { font-weight: 600; margin-bottom: 4px; }
table { border-collapse: collapse; background: var(--card); width: 100%; }
th, td { border-bottom: 1px solid var(--line); padding: 4px 8px; text-align: left; vertical-align: top; }
th { background: #eef1f5; position: sticky; top: 0; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
tr.problem td:first-child { border-left: 3px solid var(--warn); }
.filters { margin: 8px 0; display: flex; gap: 16px; align-items: center; }
.filters input[type=search] { padding: 4px 8px; width: 320px; }
pre.summary { background: var(--card); border: 1px solid var(--line); padding: 8px; overflow: auto; }
.viewer { display: grid; grid-template-columns: minmax(0, 1fr) minmax(0, 1fr); gap: 16px; }
.pane { background: var(--card); border: 1px solid var(--line); border-radius: 6px; overflow: auto;
        max-height: calc(100vh - 130px); position: sticky; top: 8px; }
.source { font: 12px/1.5 ui-monospace, "DejaVu Sans Mono", monospace; padding: 4px 0; }
.ln { display: flex; white-space: pre-wrap; overflow-wrap: anywhere; border-left: 5px solid transparent; }
.ln .no { flex: 0 0 52px; color: var(--muted); text-align: right; padding-right: 8px; user-select: none; }
.ln.k0 { border-left-color: var(--c0); } .ln.k1 { border-left-color: var(--c1); }
.ln.k2 { border-left-color: var(--c2); } .ln.k3 { border-left-color: var(--c3); }
.ln.both { border-left-color: #000; background: #fff4d6; }
.ln.hl { background: #dbe8ff; }
.chunks { padding: 8px; }
.chunk { border: 1px solid var(--line); border-left: 5px solid var(--c0); border-radius: 4px; margin: 0 0 10px;
         padding: 6px 10px; background: #fff; }
.chunk.k1 { border-left-color: var(--c1); } .chunk.k2 { border-left-color: var(--c2); }
.chunk.k3 { border-left-color: var(--c3); }
.chunk.flagged { box-shadow: 0 0 0 2px var(--warn) inset; }
.chunk h3 { margin: 0; font-size: 13px; display: flex; gap: 8px; align-items: baseline; flex-wrap: wrap; }
.crumb { color: var(--muted); font-size: 12px; }
.meta { font-size: 12px; color: var(--muted); margin: 2px 0; word-break: break-all; }
.flag { font-size: 11px; padding: 0 6px; border-radius: 8px; background: #fde3e3; color: var(--warn); }
.flag.info { background: #e6eefb; color: var(--c0); }
.flag.overlap { background: #fff0cc; color: var(--amber); }
.chunk pre { white-space: pre-wrap; word-break: break-word; font: 12px/1.45 ui-monospace, monospace;
             background: #f6f7f9; padding: 6px; margin: 6px 0 0; max-height: 320px; overflow: auto; }
.chunk pre mark { background: #fff0cc; }
.bar { height: 4px; background: #e5e8ee; border-radius: 2px; margin-top: 3px; }
.bar span { display: block; height: 4px; background: var(--c2); border-radius: 2px; }
.bar.over span { background: var(--warn); }
"""

OVERVIEW_JS = """
(function () {
  var q = document.getElementById('q'), only = document.getElementById('only');
  var rows = document.querySelectorAll('tr.file'), shown = document.getElementById('shown');
  function apply() {
    var text = q.value.toLowerCase(), n = 0;
    rows.forEach(function (row) {
      var ok = row.dataset.source.toLowerCase().indexOf(text) >= 0 &&
               (!only.checked || row.dataset.problems !== '0');
      row.hidden = !ok; if (ok) { n++; }
    });
    shown.textContent = n;
  }
  q.addEventListener('input', apply); only.addEventListener('change', apply); apply();
})();
"""

VIEWER_JS = """
(function () {
  var marked = [];
  function show(card) {
    marked.forEach(function (el) { el.classList.remove('hl'); }); marked = [];
    var a = +card.dataset.from, b = +card.dataset.to;
    if (!a) { return; }
    for (var i = a; i <= b; i++) {
      var el = document.getElementById('L' + i);
      if (el) { el.classList.add('hl'); marked.push(el); }
    }
    var first = document.getElementById('L' + a);
    if (first) { first.scrollIntoView({block: 'center'}); }
  }
  document.querySelectorAll('.chunk').forEach(function (card) {
    card.addEventListener('click', function () { show(card); });
  });
})();
"""
