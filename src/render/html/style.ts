/** The report's stylesheet, built from THEME so the colours tested for contrast are the colours shipped. */
import { THEME as T } from '../figures/theme.js';
import { FONT } from '../figures/map.js';

/** Text/background pairs the page uses (checked against WCAG AA in tests/render/contrast.test.ts). */
export const TEXT_PAIRS: { what: string; fg: string; bg: string; large?: boolean }[] = [
  { what: 'body text', fg: T.text, bg: T.page },
  { what: 'text on panels', fg: T.text, bg: T.panel },
  { what: 'secondary text on page', fg: T.muted, bg: T.page },
  { what: 'secondary text on panels', fg: T.muted, bg: T.panel },
  { what: 'links', fg: T.link, bg: T.panel },
  { what: 'links on page', fg: T.link, bg: T.page },
  { what: 'table header', fg: T.text, bg: T.headBg },
  { what: 'selected row', fg: T.text, bg: T.selRowBg },
  { what: 'tooltip', fg: T.tipText, bg: T.tipBg },
  { what: 'caution box', fg: T.cautionText, bg: T.cautionBg },
  { what: 'check holds', fg: T.okText, bg: T.panel },
  { what: 'check fails', fg: T.failText, bg: T.panel },
  { what: 'marker labels on their halo', fg: T.text, bg: T.halo },
  { what: 'buttons', fg: T.text, bg: T.headBg },
];

export function reportCss(): string {
  return `
:root { color-scheme: light; }
* { box-sizing: border-box; }
[hidden] { display: none !important; }
body { margin: 0; background: ${T.page}; color: ${T.text}; font: 15px/1.45 ${FONT}; }
a { color: ${T.link}; }
main { max-width: 1480px; margin: 0 auto; padding: 0 20px 40px; }
header.top { padding: 18px 20px 8px; max-width: 1480px; margin: 0 auto; }
header.top h1 { font-size: 24px; margin: 0 0 2px; font-weight: 650; letter-spacing: 0.2px; }
header.top h1 .cmd { font-family: ui-monospace, 'DejaVu Sans Mono', monospace; font-size: 0.8em; padding: 1px 7px; border: 1px solid ${T.border}; border-radius: 4px; background: ${T.panel}; margin-right: 8px; }
header.top .sub { color: ${T.muted}; margin: 0 0 10px; }
.facts { display: flex; flex-wrap: wrap; gap: 6px; margin: 0; padding: 0; list-style: none; }
.facts li { background: ${T.panel}; border: 1px solid ${T.border}; border-radius: 999px; padding: 2px 11px; font-size: 13.5px; }
.caution { background: ${T.cautionBg}; color: ${T.cautionText}; border-left: 5px solid ${T.cautionBorder}; padding: 10px 14px; margin: 12px 0; border-radius: 4px; }
.caution strong { font-weight: 700; }
.caution p { margin: 0; }
.caution p + p { margin-top: 4px; }
section.card { background: ${T.panel}; border: 1px solid ${T.border}; border-radius: 8px; padding: 14px 16px; margin: 14px 0; }
section.card > h2 { font-size: 17px; margin: 0 0 8px; font-weight: 650; }
dl.run { display: grid; grid-template-columns: max-content 1fr; gap: 3px 16px; margin: 0; }
dl.run dt { color: ${T.muted}; }
dl.run dd { margin: 0; overflow-wrap: anywhere; }
dl.run .mono, code { font-family: ui-monospace, 'DejaVu Sans Mono', monospace; font-size: 13px; }
.status-ok { color: ${T.okText}; font-weight: 650; }
.status-fail { color: ${T.failText}; font-weight: 650; }
.figs { display: grid; grid-template-columns: minmax(0, 1.55fr) minmax(0, 1fr); gap: 14px; align-items: start; }
.figs .side { display: grid; gap: 14px; }
.figs section.card { margin: 0; }
@media (max-width: 1100px) { .figs { grid-template-columns: minmax(0, 1fr); } }
figure { margin: 0; }
figcaption { color: ${T.muted}; font-size: 13.5px; margin-top: 6px; }
svg.fig { width: 100%; height: auto; display: block; }
.toolbar { display: flex; flex-wrap: wrap; gap: 6px 14px; align-items: center; margin-bottom: 8px; font-size: 14px; }
.toolbar .grp { display: inline-flex; gap: 4px; }
button, .btn { font: inherit; font-size: 14px; color: ${T.text}; background: ${T.headBg}; border: 1px solid ${T.border}; border-radius: 5px; padding: 3px 10px; cursor: pointer; text-decoration: none; display: inline-block; }
button:hover, .btn:hover { border-color: ${T.muted}; }
button:focus-visible, .btn:focus-visible, tr:focus-visible, th button:focus-visible { outline: 3px solid ${T.select}; outline-offset: 1px; }
label.tog { display: inline-flex; gap: 4px; align-items: center; cursor: pointer; }
.readout { font-size: 13.5px; color: ${T.muted}; min-height: 1.45em; font-variant-numeric: tabular-nums; }
#map-plot { cursor: grab; touch-action: none; }
#map-plot.dragging { cursor: grabbing; }
.fig-map .ct, .fig-map .ol, .fig-map .pth path { vector-effect: non-scaling-stroke; }
.fig-map .ct { stroke-width: 0.7px; }
.fig-map .ct.ct-index { stroke-width: 1.3px; }
.fig-map .ol { stroke-width: 1.8px; cursor: pointer; pointer-events: visibleStroke; }
.fig-map .pth-casing { stroke-width: 5px; }
.fig-map .pth-line { stroke-width: 2.5px; }
.fig-map .pth { cursor: pointer; }
.mk { cursor: pointer; }
.mk.sel .mk-halo { stroke: ${T.select}; stroke-width: 7px; }
.mk.hov .mk-halo { stroke: ${T.select}; stroke-width: 5px; }
.stem.hov { stroke: ${T.select}; }
.fig-map .ol.sel { stroke: ${T.select}; stroke-width: 3.5px; }
.fig-map .pth.sel .pth-casing { stroke: ${T.select}; stroke-width: 8px; }
.stem { cursor: pointer; }
.stem.sel { stroke: ${T.select}; }
table.data { border-collapse: collapse; width: 100%; font-size: 13.5px; font-variant-numeric: tabular-nums; }
table.data th { background: ${T.headBg}; text-align: left; font-weight: 650; position: sticky; top: 0; z-index: 1; padding: 0; border-bottom: 1px solid ${T.border}; }
table.data th button { all: unset; display: block; padding: 5px 8px; cursor: pointer; width: 100%; box-sizing: border-box; }
table.data th .unit { font-weight: 400; color: ${T.muted}; }
table.data th[aria-sort="ascending"] button::after { content: ' ▲'; }
table.data th[aria-sort="descending"] button::after { content: ' ▼'; }
table.data td { padding: 3px 8px; border-bottom: 1px solid ${T.headBg}; white-space: nowrap; }
table.data td.num { text-align: right; }
table.data tbody tr { cursor: pointer; }
table.data tbody tr:hover { background: ${T.page}; }
table.data tbody tr.sel { background: ${T.selRowBg}; box-shadow: inset 4px 0 0 ${T.select}; }
.tablewrap { max-height: 460px; overflow: auto; border: 1px solid ${T.border}; border-radius: 5px; }
.tablebar { display: flex; flex-wrap: wrap; gap: 8px 14px; align-items: center; margin: 6px 0; font-size: 13.5px; color: ${T.muted}; }
.tip { position: fixed; z-index: 10; pointer-events: none; background: ${T.tipBg}; color: ${T.tipText}; padding: 7px 10px; border-radius: 6px; font-size: 13px; line-height: 1.35; max-width: 340px; box-shadow: 0 3px 12px rgba(0,0,0,0.25); display: none; }
.tip table { border-collapse: collapse; }
.tip td { padding: 0 6px 0 0; vertical-align: top; }
.tip td:first-child { opacity: 0.85; }
.tip .h { font-weight: 700; margin-bottom: 3px; }
.selinfo { font-size: 13.5px; margin-top: 6px; }
.selinfo table { border-collapse: collapse; }
.selinfo td { padding: 0 10px 0 0; }
.selinfo td:first-child { color: ${T.muted}; }
ul.notes { margin: 0; padding-left: 20px; }
ul.notes li { margin: 2px 0; }
footer { color: ${T.muted}; font-size: 13px; max-width: 1480px; margin: 0 auto; padding: 0 20px 24px; }
.sr { position: absolute; width: 1px; height: 1px; overflow: hidden; clip: rect(0 0 0 0); }
`;
}
