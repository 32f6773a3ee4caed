import type { MemberState } from '../journal/index.js';

/**
 * Colours of the report. Series and events take hues far apart that stay distinct for the common
 * colour-vision deficiencies (after the Okabe & Ito palette, "Color universal design", 2008, from
 * memory); member states run from calm (active) to alert (watched).
 */
export const SERIES_COLOURS = {
  accuracy: '#0072b2',
  kappa: '#d55e00',
  rmse: '#0072b2',
  mae: '#d55e00',
} as const;
export const EVENT_COLOURS = {
  warning: '#d08c00',
  drift: '#7b3fa0',
  replacement: '#c0392b',
  input: '#00897b',
} as const;
/** The stream's true change points: black, apart from every event hue. */
export const CHANGE_COLOUR = '#1d2330';
/** The tick where a seat's member was replaced, dark on every state colour. */
export const LANE_MARK_COLOUR = '#3a1512';
export const STATE_COLOURS: Readonly<Record<MemberState, string>> = {
  warming: '#b9d3ee',
  active: '#6dbb8a',
  watched: '#f0b429',
  retired: '#a0a6ad',
};

const stateRules = (Object.entries(STATE_COLOURS) as [MemberState, string][])
  .map(([state, colour]) => `.st-${state}{fill:${colour}}.sw-${state}{background:${colour}}`)
  .join('');

/** The document's only style sheet: system fonts, no external resource. */
export const STYLE = `
:root{color-scheme:light}
*{box-sizing:border-box}
body{margin:0;background:#f6f7f9;color:#1d2330;font:14px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,"Helvetica Neue",Arial,sans-serif}
main{max-width:1160px;margin:0 auto;padding:20px 24px 28px}
h1{font-size:21px;margin:0 0 2px;font-weight:650;overflow-wrap:anywhere}
h2{font-size:15px;margin:0 0 8px;font-weight:650}
.meta{color:#5b6372;font-size:13px;margin:0 0 14px;overflow-wrap:anywhere}
.meta b{color:#1d2330;font-weight:600}
section{background:#fff;border:1px solid #e1e4ea;border-radius:8px;padding:14px 16px;margin:0 0 14px}
.note{color:#5b6372;font-size:13px;margin:4px 0 0}
.figures{display:grid;grid-template-columns:repeat(auto-fit,minmax(98px,1fr));gap:8px;margin:0 0 14px}
.figure{background:#fff;border:1px solid #e1e4ea;border-radius:8px;padding:7px 10px}
.figure .label{display:block;color:#5b6372;font-size:11.5px;white-space:nowrap}
.figure .value{display:block;font-size:19px;font-weight:600;font-variant-numeric:tabular-nums;white-space:nowrap}
.figure.alert .value{color:#b3261e}
.legend{display:flex;flex-wrap:wrap;gap:4px 16px;font-size:12.5px;color:#3b4352;margin:0 0 6px}
.legend span{display:inline-flex;align-items:center;gap:6px}
.legend .hint{color:#8a92a0;font-style:italic}
.swatch{display:inline-block;width:14px;height:10px;border-radius:2px}
.line-swatch{display:inline-block;width:18px;height:3px;border-radius:2px}
svg.chart{display:block;width:100%;height:auto;font-family:inherit}
.legend svg{display:inline-block;flex:none}
svg .tick{font-size:11px;fill:#5b6372;font-variant-numeric:tabular-nums}
svg .mark-count{font-size:9px;font-weight:600;fill:#1d2330;font-variant-numeric:tabular-nums;paint-order:stroke;stroke:#fff;stroke-width:2.5px;stroke-linejoin:round}
svg .cluster{fill:none;stroke:#5b6372;stroke-width:.8}
svg .axis-name{font-style:italic}
svg .lane-label{font-size:11.5px;fill:#1d2330;font-variant-numeric:tabular-nums}
svg .axis{stroke:#9aa1ad;stroke-width:1}
svg .grid{stroke:#e8ebf0;stroke-width:1}
svg .zero{stroke:#b8bec8;stroke-width:1}
svg .series{fill:none;stroke-width:1.6;stroke-linejoin:round}
svg .s-accuracy{stroke:${SERIES_COLOURS.accuracy}}
svg .s-kappa{stroke:${SERIES_COLOURS.kappa}}
svg .s-rmse{stroke:${SERIES_COLOURS.rmse}}
svg .s-mae{stroke:${SERIES_COLOURS.mae}}
svg .rug{stroke:#eef0f3;stroke-width:1}
svg .m-warning{fill:${EVENT_COLOURS.warning}}
svg .m-drift{fill:${EVENT_COLOURS.drift}}
svg .m-replacement{fill:${EVENT_COLOURS.replacement}}
svg .m-input{fill:${EVENT_COLOURS.input}}
svg .guide{stroke:${EVENT_COLOURS.replacement};stroke-width:1;stroke-dasharray:2 3;opacity:.45}
svg .change{stroke:${CHANGE_COLOUR};stroke-width:1.4}
svg .change-label{font-size:10.5px;font-weight:600;fill:${CHANGE_COLOUR}}
svg .lane-mark{fill:${LANE_MARK_COLOUR}}
svg.lanes rect{shape-rendering:crispEdges}
${stateRules}
.tables{display:flex;flex-wrap:wrap;gap:18px;align-items:flex-start}
.scroll{overflow-x:auto;max-width:100%}
table{border-collapse:collapse;font-size:13px;font-variant-numeric:tabular-nums}
th,td{padding:3px 8px;text-align:left;vertical-align:top}
thead th{color:#5b6372;font-weight:600;border-bottom:1px solid #d5d9e0}
td.num,th.num{text-align:right}
table.matrix td.cell{text-align:right;min-width:58px;border:1px solid #fff}
table.matrix td.diag{font-weight:700}
table.matrix th.corner{color:#5b6372;font-weight:400;font-size:12px}
table.matrix.compact td.cell{min-width:0;padding:2px 4px;font-size:11px}
table.matrix.compact th{padding:2px 4px;font-size:11px}
table.kv{width:100%}
table.kv table.kv{width:auto;min-width:50%}
table.kv th{color:#3b4352;font-weight:600;width:1%;white-space:nowrap;padding-right:14px}
table.kv td,table.kv th{border-top:1px solid #eef0f3}
table.kv>tbody>tr:first-child>th,table.kv>tbody>tr:first-child>td{border-top:none}
table.kv table.kv{margin:0}
table.kv td>table.kv th,table.kv td>table.kv td{padding-top:1px;padding-bottom:1px}
table.kv td{overflow-wrap:anywhere}
code{font-family:ui-monospace,SFMono-Regular,Menlo,Consolas,monospace;font-size:12.5px}
footer{color:#5b6372;font-size:12.5px;border-top:1px solid #e1e4ea;padding-top:10px}
`;
