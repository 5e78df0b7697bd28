/**
 * The report's stylesheet: system fonts only (nothing to fetch), changes marked by symbol and words as
 * well as colour, and a print layout that drops the controls, keeps figures whole and prints in black.
 */
export const REPORT_STYLE = `
:root{--ink:#1d1d1f;--muted:#555;--line:#c8c8cc;--old:#fbe3e1;--new:#e0f2e4;--accent:#1f4e8c}
*{box-sizing:border-box}
body{font:15px/1.45 system-ui,-apple-system,"Segoe UI",sans-serif;color:var(--ink);margin:0 auto;padding:1.5rem 2rem 4rem;max-width:72rem}
h1{font-size:1.7rem;margin:.2rem 0}h2{font-size:1.3rem;margin-top:2.2rem;border-bottom:2px solid var(--ink);padding-bottom:.2rem}
h3{font-size:1.05rem;margin:1.4rem 0 .4rem}
a{color:var(--accent)}
.sub{color:var(--muted);margin:.2rem 0 1rem}
nav ol{display:flex;flex-wrap:wrap;gap:.4rem 1.2rem;padding:0;list-style:none;margin:.5rem 0 1rem}
code,.mono{font-family:ui-monospace,"DejaVu Sans Mono",monospace;font-size:.92em}
table{border-collapse:collapse;margin:.6rem 0 1rem}
th,td{border:1px solid var(--line);padding:.25rem .55rem;text-align:left;vertical-align:top}
thead th{background:#f1f1f3}
caption{text-align:left;font-weight:600;padding:.3rem 0;caption-side:top}
td.num,th.num{text-align:right;font-variant-numeric:tabular-nums}
td.old{background:var(--old)}td.new{background:var(--new)}
.mark{font-weight:700;color:var(--muted)}
.cards{display:grid;grid-template-columns:repeat(auto-fill,minmax(21rem,1fr));gap:1rem}
figure.variable{margin:0;border:1px solid var(--line);border-radius:6px;padding:.6rem .8rem;break-inside:avoid}
figure.variable figcaption{font-weight:600;margin-bottom:.3rem}
figure.variable table{font-size:.85em;margin:.4rem 0 0}
svg.chart{display:block;max-width:100%;height:auto}
.overview{display:grid;grid-template-columns:repeat(auto-fill,minmax(10rem,1fr));gap:.6rem;margin:1rem 0}
.overview div{border:1px solid var(--line);border-radius:6px;padding:.5rem .7rem}
.overview dt{color:var(--muted);font-size:.85em}.overview dd{margin:0;font-size:1.4rem;font-weight:600}
.status-pass{color:#185c2b}.status-fail{color:#9b1c1c}
form.filters{display:flex;flex-wrap:wrap;gap:.5rem 1rem;align-items:end;margin:.6rem 0}
form.filters label{display:flex;flex-direction:column;font-size:.85em;color:var(--muted)}
form.filters select,form.filters input,form.filters button{font:inherit;padding:.2rem .4rem}
:focus-visible{outline:3px solid #f0a500;outline-offset:1px}
.diff-status{font-weight:600}
.note-evidence{white-space:pre-wrap;border-left:3px solid var(--line);padding-left:.7rem;margin:.4rem 0}
article.note{break-inside:avoid;margin-bottom:1rem}
.limit{border:1px solid #d9a400;background:#fff7d6;padding:.5rem .7rem;border-radius:4px}
.flags{margin:.3rem 0 0;padding-left:1.1rem;font-size:.85em}
@media print{
  body{max-width:none;padding:0;font-size:11pt;color:#000}
  nav,form.filters{display:none!important}
  a{color:#000;text-decoration:none}
  td.old,td.new,thead th{background:none}
  h2{break-after:avoid}
  table,figure,article{break-inside:avoid}
  .cards{display:block}figure.variable{margin-bottom:.6rem}
}
`;
