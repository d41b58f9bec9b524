/** The page's only styling, inlined so the report opens offline and alone. */
export const REPORT_CSS = `
:root { color-scheme: light; --ink: #1d1d1f; --muted: #5f6368; --line: #d9dce1; --panel: #f6f7f9; --good: #0b6b3a; --warn: #a14b00; }
* { box-sizing: border-box; }
body { margin: 0; font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, Helvetica, Arial, sans-serif; color: var(--ink); background: #fff; }
main { max-width: 1180px; margin: 0 auto; padding: 24px 28px 48px; }
h1 { font-size: 22px; margin: 0 0 4px; }
h2 { font-size: 18px; margin: 36px 0 8px; padding-bottom: 4px; border-bottom: 1px solid var(--line); }
h3 { font-size: 15px; margin: 20px 0 6px; }
p.sub, p.note { color: var(--muted); margin: 4px 0 12px; }
.verdict { margin: 18px 0; padding: 14px 18px; border-left: 5px solid var(--good); background: var(--panel); }
.verdict p.headline { font-size: 17px; font-weight: 600; margin: 0 0 6px; }
.verdict ul { margin: 6px 0 0; padding-left: 20px; }
.caution { margin: 12px 0 18px; padding: 10px 16px; border-left: 5px solid var(--warn); background: #fff7ec; }
dl.input { display: grid; grid-template-columns: max-content 1fr; gap: 4px 16px; margin: 8px 0 12px; }
dl.input dt { color: var(--muted); }
dl.input dd { margin: 0; overflow-wrap: anywhere; }
table.metrics { border-collapse: collapse; margin: 0 0 16px; font-variant-numeric: tabular-nums; }
p.table-caption { color: var(--muted); margin: 14px 0 6px; }
table.metrics th, table.metrics td { border: 1px solid var(--line); padding: 4px 10px; text-align: right; white-space: nowrap; }
table.metrics th[scope="row"], table.metrics th.rowhead { text-align: left; }
table.metrics th[scope="row"] { font-weight: normal; background: var(--panel); vertical-align: top; white-space: normal; max-width: 260px; }
table.metrics thead th { background: var(--panel); }
table.metrics td.best { font-weight: 700; color: var(--good); }
table.metrics td.warn { color: var(--warn); font-weight: 700; }
.table-scroll { overflow-x: auto; }
.legend { display: flex; flex-wrap: wrap; gap: 6px 18px; margin: 6px 0 10px; }
.legend span { display: inline-flex; align-items: center; gap: 6px; }
.legend i { display: inline-block; width: 14px; height: 14px; border-radius: 3px; }
.plots { display: flex; flex-wrap: wrap; gap: 12px 20px; }
figure.plot { margin: 0; padding: 8px; border: 1px solid var(--line); border-radius: 6px; background: #fff; max-width: 100%; overflow-x: auto; }
figure.plot svg { display: block; max-width: 100%; height: auto; }
figure.plot figcaption { color: var(--muted); font-size: 12px; margin-top: 4px; max-width: 640px; }
footer { margin-top: 40px; color: var(--muted); font-size: 12px; }
`;
