"""The report's stylesheet: one for the screen and a print stylesheet for clean PDF pages."""
from __future__ import annotations

SCREEN = """
:root { --ink: #1b1b1b; --muted: #5a5a5a; --rule: #c8c8c8; --gain: #5e3c99; --lose: #e66101;
        --band: #f4f4f4; }
* { box-sizing: border-box; }
html { font-size: 15px; }
body { font-family: "DejaVu Sans", "Helvetica Neue", Arial, sans-serif; color: var(--ink);
       line-height: 1.45; margin: 0 auto; max-width: 62rem; padding: 1.2rem 1.4rem 3rem; }
header.top { border-bottom: 3px solid var(--ink); margin-bottom: 1rem; }
header.top h1 { font-size: 1.6rem; margin: 0 0 .3rem; }
p.meta { color: var(--muted); font-size: .85rem; margin: .2rem 0 .6rem; }
h2 { font-size: 1.25rem; border-bottom: 1px solid var(--rule); padding-bottom: .2rem; margin-top: 2.2rem; }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; }
h4 { font-size: .95rem; margin: 1rem 0 .3rem; color: var(--muted); }
nav.contents { background: var(--band); padding: .6rem 1rem; font-size: .9rem; }
nav.contents ol { margin: .2rem 0; padding-left: 1.4rem; columns: 2; }
nav.contents a { color: var(--ink); }
section.findings { border-left: 5px solid var(--gain); padding-left: 1rem; }
section.findings p.source { color: var(--muted); font-size: .8rem; margin: -.2rem 0 .2rem; }
section.findings p.finding { margin: .2rem 0 .8rem; }
section.cautions { background: #fff4e8; border-left: 5px solid var(--lose); padding: .2rem 1rem .6rem; }
figure { margin: 1rem 0; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { font-size: .85rem; color: var(--muted); }
table { border-collapse: collapse; font-size: .8rem; margin: .5rem 0 1rem; }
th, td { border: 1px solid var(--rule); padding: .15rem .45rem; text-align: right; vertical-align: top; }
th { background: var(--band); }
td.text, th.text { text-align: left; }
table.keys td { text-align: left; }
caption { caption-side: top; text-align: left; font-size: .8rem; color: var(--muted); padding: .2rem 0; }
div.wide { overflow-x: auto; }
pre { background: var(--band); border: 1px solid var(--rule); padding: .5rem .7rem; font-size: .75rem;
      overflow: auto; max-height: 26rem; white-space: pre; }
code { font-family: "DejaVu Sans Mono", Consolas, monospace; }
p.note { font-size: .8rem; color: var(--muted); }
.gaining { color: var(--gain); font-weight: bold; }
.losing { color: var(--lose); font-weight: bold; }
footer { margin-top: 3rem; border-top: 1px solid var(--rule); font-size: .8rem; color: var(--muted); }
"""

PRINT = """
@page { size: A4; margin: 14mm 12mm 16mm 12mm; }
@media print {
  html { font-size: 10pt; }
  body { max-width: none; padding: 0; color: #000; }
  nav.contents { display: none; }
  h2 { break-before: page; page-break-before: always; margin-top: 0; }
  section.findings h2, section.cautions h2 { break-before: auto; page-break-before: auto; }
  h2, h3, h4 { break-after: avoid; page-break-after: avoid; }
  figure, table, pre, p.finding { break-inside: avoid; page-break-inside: avoid; }
  figure img { max-height: 200mm; border: none; }
  pre { max-height: none; overflow: visible; white-space: pre-wrap; font-size: 7.5pt; }
  div.wide { overflow: visible; }
  table { font-size: 7.5pt; }
  thead { display: table-header-group; }
  a { color: inherit; text-decoration: none; }
  section.cautions { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  .screen-only { display: none; }
}
"""

STYLESHEET = SCREEN + PRINT
