/** Write a built report into an output folder: report.html, the standalone SVG figures, and map.png on request. */
import { createRequire } from 'node:module';
import type { OutputFolder } from '../../io/outdir.js';
import { renderHtml } from './page.js';
import type { BuiltReport } from './model.js';
import { InputError } from '../../errors.js';

export interface RenderOptions {
  /** Write report.html and the standalone SVG figures. */
  report: boolean;
  /** Also render map.png from map.svg. */
  png: boolean;
}

const XML = '<?xml version="1.0" encoding="UTF-8"?>\n';

/** Standalone SVG text (an XML prolog before the <svg> element). */
export function standaloneSvg(svg: string): string {
  return XML + svg + '\n';
}

/** Names of the files a report run adds to the output folder. */
export function reportFileNames(built: BuiltReport, opts: RenderOptions): string[] {
  const names: string[] = [];
  if (opts.report) {
    names.push('report.html', 'map.svg');
    if (built.svgs.tree) names.push('tree.svg');
    if (built.svgs.persistence) names.push('persistence.svg');
  }
  if (opts.png) names.push('map.png');
  return names;
}

type ResvgModule = { Resvg: new (svg: string, opts?: Record<string, unknown>) => { render(): { asPng(): Uint8Array; width: number; height: number } } };

/** Load the PNG renderer (@resvg/resvg-js, a prebuilt native module) or explain why it cannot be used. */
export function loadResvg(): ResvgModule {
  try {
    return createRequire(import.meta.url)('@resvg/resvg-js') as ResvgModule;
  } catch (e) {
    throw new InputError(`--png needs the @resvg/resvg-js package with its prebuilt binary for ${process.platform}-${process.arch}, which could not be loaded (${(e as Error).message.split('\n')[0]}); reinstall sill's dependencies with npm ci, or leave out --png (report.html and map.svg do not need it)`);
  }
}

/** PNG of an SVG at `scale` times its size, fonts from the system. */
export function svgToPng(svg: string, scale = 2): Uint8Array {
  const { Resvg } = loadResvg();
  const w = Number(/viewBox="0 0 ([\d.]+) /.exec(svg)?.[1] ?? 800);
  const r = new Resvg(svg, { fitTo: { mode: 'width', value: Math.round(w * scale) }, font: { loadSystemFonts: true, defaultFontFamily: 'DejaVu Sans' }, background: '#ffffff' });
  return r.render().asPng();
}

export function writeReportFiles(out: OutputFolder, built: BuiltReport, opts: RenderOptions): string[] {
  const written: string[] = [];
  if (opts.png) {
    // render first: if the renderer is missing, fail before anything is staged
    const png = svgToPng(built.svgs.map);
    out.write('map.png', png);
    written.push('map.png');
  }
  if (opts.report) {
    out.write('report.html', renderHtml(built.doc));
    out.write('map.svg', standaloneSvg(built.svgs.map));
    written.push('report.html', 'map.svg');
    if (built.svgs.tree) { out.write('tree.svg', standaloneSvg(built.svgs.tree)); written.push('tree.svg'); }
    if (built.svgs.persistence) { out.write('persistence.svg', standaloneSvg(built.svgs.persistence)); written.push('persistence.svg'); }
  }
  return written;
}
