/** The report's style sheet, inlined in the page (a report is one file). */
export const REPORT_STYLE = `
:root { --ink: #1d252c; --soft: #5b6773; --line: #e2e7ec; --panel: #f6f8fa; --accent: #2f5d8a; --tie: #eef4fb; --warn: #8a5a00; }
* { box-sizing: border-box; }
body { margin: 0; color: var(--ink); font: 14px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; background: #fff; }
header { padding: 28px 40px 18px; border-bottom: 1px solid var(--line); background: var(--panel); }
header .brand { margin: 0; color: var(--accent); font-weight: 700; letter-spacing: .04em; text-transform: uppercase; font-size: 12px; }
header h1 { margin: 4px 0; font-size: 24px; }
header .meta { margin: 0; color: var(--soft); }
main { padding: 8px 40px 24px; max-width: 1180px; }
section { margin: 28px 0; }
h2 { font-size: 18px; margin: 0 0 10px; padding-bottom: 6px; border-bottom: 2px solid var(--line); }
h3 { font-size: 15px; margin: 18px 0 6px; }
.note, .empty, figcaption { color: var(--soft); }
.empty { font-style: italic; }
ul.headline { padding-left: 18px; margin: 8px 0 14px; }
ul.headline li { margin: 4px 0; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 4px 18px; margin: 0; }
dl.facts dt { color: var(--soft); }
dl.facts dd { margin: 0; }
table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; }
th, td { text-align: left; padding: 5px 8px; border-bottom: 1px solid var(--line); vertical-align: top; }
th { font-size: 12px; color: var(--soft); font-weight: 600; }
td.num, th.num { text-align: right; white-space: nowrap; }
table.compact { width: auto; min-width: 420px; }
tr.tie td { background: var(--tie); }
.tie-mark { color: var(--accent); font-weight: 700; }
td.params { font-family: ui-monospace, SFMono-Regular, Menlo, monospace; font-size: 12px; color: var(--soft); }
.status { font-size: 12px; padding: 1px 6px; border-radius: 8px; background: var(--panel); }
.status-done { color: #23613a; background: #e7f4ec; }
.status-pruned { color: var(--soft); }
.status-failed, .status-timed_out { color: #9b2c2c; background: #fbeaea; }
.figures { display: flex; flex-wrap: wrap; gap: 18px; }
figure { margin: 8px 0; }
figure svg { max-width: 100%; height: auto; }
figcaption { font-size: 12px; max-width: 640px; }
code { font-family: ui-monospace, SFMono-Regular, Menlo, monospace; font-size: 12px; }
.cautions { background: #fffaf0; border: 1px solid #f1e2c2; border-radius: 8px; padding: 6px 20px 14px; }
.cautions h2 { border-color: #f1e2c2; color: var(--warn); }
.caution h3 { margin-bottom: 2px; }
.caution p { margin: 0 0 6px; }
footer { padding: 16px 40px 32px; color: var(--soft); font-size: 12px; border-top: 1px solid var(--line); }
@media print { header { background: none; } section { break-inside: avoid-page; } }
`;
