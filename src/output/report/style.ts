// The CSS of the report page (inline: the report fetches nothing).

export const REPORT_STYLE = `
:root { color-scheme: light; }
body { font-family: system-ui, -apple-system, "Segoe UI", sans-serif; margin: 0 auto; max-width: 1240px; padding: 16px 24px 40px; color: #1a1a1a; background: #ffffff; }
h1 { font-size: 1.45rem; margin: 0.2em 0; }
h2 { font-size: 1.15rem; margin: 1.6em 0 0.4em; border-bottom: 1px solid #d0d0d0; padding-bottom: 4px; }
p.about, p.intro { margin: 0.25em 0; color: #333333; max-width: 70em; }
p.note { margin: 0.2em 0; font-size: 0.85rem; color: #555555; }
nav { margin: 0.8em 0; font-size: 0.95rem; }
nav a { color: #1d367e; }
.figures { display: flex; flex-wrap: wrap; gap: 18px; }
figure.plot-figure { margin: 0; flex: 1 1 520px; max-width: 600px; }
figcaption { font-weight: 600; font-size: 0.92rem; margin-bottom: 4px; }
svg.plot, svg.heatmap { width: 100%; height: auto; display: block; }
svg .frame { fill: none; stroke: #444444; stroke-width: 1; }
svg .colour-bar { stroke: #444444; stroke-width: 1; }
svg .grid { stroke: #e3e3e3; stroke-width: 1; }
svg .axis { stroke: #444444; stroke-width: 1; }
svg .tick { font-size: 11px; fill: #333333; }
svg .axis-label { font-size: 12.5px; fill: #1a1a1a; }
svg .cell-text { font-size: 10px; }
svg .line { fill: none; stroke-width: 2; stroke-linejoin: round; }
svg .markers { stroke-width: 1.3; }
svg .errorbar { fill: none; stroke-width: 1.4; }
ul.legend { list-style: none; padding: 0; margin: 4px 0 0; display: flex; flex-wrap: wrap; gap: 2px 14px; font-size: 0.82rem; }
ul.legend li { display: flex; align-items: center; gap: 4px; }
.table-wrap { flex: 1 1 100%; overflow-x: auto; }
table { border-collapse: collapse; font-size: 0.85rem; margin: 6px 0; }
th, td { border: 1px solid #d0d0d0; padding: 3px 8px; text-align: left; vertical-align: top; }
th { background: #f3f3f3; }
footer { margin-top: 2em; font-size: 0.8rem; color: #666666; }
@media print { figure.plot-figure { break-inside: avoid; } }
`;
