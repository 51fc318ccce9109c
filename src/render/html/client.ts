/**
 * The report's script, run in the browser. It is written here as one self-contained function
 * (no imports, no outside names) and embedded with Function.prototype.toString, so TypeScript
 * checks it but the page carries no external script. It reads the JSON in #sill-data and wires:
 * pan and zoom of the map, tooltips, the pointer read-out of display-raster values, layer
 * toggles, sortable tables, and the selection shared by map, tree, diagram and tables.
 */

/* eslint-disable */
export function reportClient(): void {
  type Tip = [string, string][];
  interface HoverLayer { label: string; unit: string; mode: 'exact' | 'range' | 'label'; b64: string; prefix?: string }
  interface Col { key: string; label: string; unit: string; type: 'num' | 'int' | 'text'; digits?: number; decimals?: number }
  interface Table { id: string; title: string; caption: string; columns: Col[]; rows: (string | number | null)[][]; keys: (string | null)[]; total: number; csv?: string }
  interface Data {
    frame: { width: number; height: number; transform: number[]; factor: number; dw: number; dh: number };
    geometry: { fw: number; fh: number; ml: number; mt: number; pw: number; ph: number; k: number };
    northUp: boolean; geographic: boolean; xyUnit: string; interpolated: boolean;
    hover: HoverLayer[];
    tips: Record<string, Tip>;
    tables: Table[];
  }

  const dataEl = document.getElementById('sill-data');
  if (!dataEl) return;
  const D: Data = JSON.parse(dataEl.textContent || '{}');
  const NS = 'http://www.w3.org/2000/svg';

  // ---------- numbers ----------
  const fmt = (x: unknown, digits = 6): string => {
    if (x === null || x === undefined || x === '') return '—';
    if (typeof x !== 'number') return String(x);
    if (x === Infinity) return '∞';
    if (x === -Infinity) return '−∞';
    if (!isFinite(x)) return '—';
    let s: string;
    if (x !== 0 && (Math.abs(x) >= 1e9 || Math.abs(x) < 1e-4)) s = x.toExponential(digits - 1);
    else if (Math.abs(x) >= Math.pow(10, digits)) s = x.toFixed(0);
    else s = String(Number(x.toPrecision(digits)));
    return s.replace('-', '−');
  };
  const niceStep = (span: number, target: number): number => {
    if (!(span > 0)) return 1;
    const raw = span / Math.max(1, target);
    const mag = Math.pow(10, Math.floor(Math.log10(raw)));
    for (const m of [1, 2, 2.5, 5, 10]) if (m * mag >= raw * (1 - 1e-9)) return m * mag;
    return 10 * mag;
  };
  const ticks = (lo: number, hi: number, target: number): number[] => {
    if (hi < lo) { const t = lo; lo = hi; hi = t; }
    const step = niceStep(hi - lo, target), out: number[] = [];
    const dg = Math.min(20, Math.max(0, -Math.floor(Math.log10(step)) + 2));
    for (let k = Math.ceil(lo / step - 1e-9); k * step <= hi + step * 1e-9; k++) out.push(Number((k * step).toFixed(dg)));
    return out;
  };

  // ---------- tooltip ----------
  const tip = document.createElement('div');
  tip.className = 'tip';
  tip.setAttribute('role', 'tooltip');
  document.body.appendChild(tip);
  const esc = (s: string) => s.replace(/[&<>"]/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' } as Record<string, string>)[c]);
  const tipHtml = (head: string, rows: Tip) => `<div class="h">${esc(head)}</div><table>${rows.map(([a, b]) => `<tr><td>${esc(a)}</td><td>${esc(b)}</td></tr>`).join('')}</table>`;
  const showTip = (html: string, ev: { clientX: number; clientY: number }) => {
    tip.innerHTML = html;
    tip.style.display = 'block';
    const r = tip.getBoundingClientRect();
    let x = ev.clientX + 14, y = ev.clientY + 14;
    if (x + r.width > window.innerWidth - 4) x = ev.clientX - r.width - 14;
    if (y + r.height > window.innerHeight - 4) y = ev.clientY - r.height - 14;
    tip.style.left = `${Math.max(4, x)}px`;
    tip.style.top = `${Math.max(4, y)}px`;
  };
  const hideTip = () => { tip.style.display = 'none'; };

  // Native <title> tooltips stay in the standalone SVGs; here the richer tooltip replaces them.
  const titles: Record<string, string> = {};
  document.querySelectorAll('svg.fig [data-k] > title, svg.fig path.ct > title, svg.fig .binned title').forEach((t) => {
    const p = t.parentElement;
    if (!p) return;
    const k = p.getAttribute('data-k');
    if (k && !titles[k]) titles[k] = t.textContent || '';
    if (!k) p.setAttribute('data-title', t.textContent || '');
    t.remove();
  });
  const keyTip = (k: string): string => {
    const rows = D.tips[k];
    if (rows && rows.length) return tipHtml(rows[0][1], rows.slice(1));
    return `<div class="h">${esc(titles[k] || k)}</div>`;
  };

  // ---------- selection shared by every view ----------
  let selected: string | null = null;
  const selInfo = document.getElementById('selinfo');
  const byKey = (k: string) => document.querySelectorAll(`[data-k="${CSS.escape(k)}"]`);
  const tableApi: Record<string, { reveal: (k: string) => HTMLElement | null }> = {};
  const select = (k: string | null, from: string) => {
    document.querySelectorAll('.sel').forEach((e) => e.classList.remove('sel'));
    selected = k;
    if (!k) { if (selInfo) selInfo.innerHTML = ''; return; }
    byKey(k).forEach((e) => e.classList.add('sel'));
    for (const id of Object.keys(tableApi)) {
      const row = tableApi[id].reveal(k);
      if (row) { row.classList.add('sel'); if (from !== 'table') row.scrollIntoView({ block: 'nearest' }); }
    }
    if (from !== 'map') panTo(k);
    if (selInfo) {
      const rows = D.tips[k];
      selInfo.innerHTML = rows ? `<strong>Selected: ${esc(rows[0][1])}</strong><table>${rows.slice(1).map(([a, b]) => `<tr><td>${esc(a)}</td><td>${esc(b)}</td></tr>`).join('')}</table>` : '';
    }
  };

  document.querySelectorAll('svg.fig').forEach((svg) => {
    const from = svg.classList.contains('fig-map') ? 'map' : 'figure';
    svg.addEventListener('pointerover', (ev) => {
      const t = (ev.target as Element).closest('[data-k]');
      if (t) showTip(keyTip(t.getAttribute('data-k')!), ev as PointerEvent);
    });
    svg.addEventListener('pointerout', (ev) => {
      const t = (ev.target as Element).closest('[data-k]');
      if (t) hideTip();
    });
    svg.addEventListener('click', (ev) => {
      if (dragged) return;
      const t = (ev.target as Element).closest('[data-k]');
      if (t) { const k = t.getAttribute('data-k')!; select(selected === k ? null : k, from); }
    });
  });

  // ---------- map: pan, zoom, read-out ----------
  const plot = document.getElementById('map-plot') as unknown as SVGSVGElement | null;
  const axes = document.getElementById('map-axes');
  const F = D.frame, G = D.geometry;
  let view = { u: 0, v: 0, w: F.width, h: F.height };
  const marks: { el: SVGGElement; x: number; y: number }[] = [];
  let dragged = false;
  if (plot) {
    plot.querySelectorAll('g.mk').forEach((g) => {
      const m = /translate\(([-\d.e]+)[ ,]([-\d.e]+)\)/.exec(g.getAttribute('transform') || '');
      if (m) marks.push({ el: g as SVGGElement, x: Number(m[1]), y: Number(m[2]) });
    });
  }
  const drawAxes = () => {
    if (!axes) return;
    const t = D.frame.transform;
    const xs: [number, string][] = [], ys: [number, string][] = [];
    if (D.northUp) {
      const xa = t[0] + view.u * t[1], xb = t[0] + (view.u + view.w) * t[1];
      const ya = t[3] + view.v * t[5], yb = t[3] + (view.v + view.h) * t[5];
      for (const X of ticks(Math.min(xa, xb), Math.max(xa, xb), 6)) xs.push([(X - t[0]) / t[1], fmt(X, 8)]);
      for (const Y of ticks(Math.min(ya, yb), Math.max(ya, yb), 6)) ys.push([(Y - t[3]) / t[5], fmt(Y, 8)]);
    } else {
      for (const c of ticks(view.u, view.u + view.w, 6)) xs.push([c, fmt(c)]);
      for (const r of ticks(view.v, view.v + view.h, 6)) ys.push([r, fmt(r)]);
    }
    axes.querySelectorAll('.tick').forEach((e) => e.remove());
    const yb = G.mt + G.ph;
    const add = (name: string, a: Record<string, string | number>, text?: string) => {
      const e = document.createElementNS(NS, name);
      for (const [k, v] of Object.entries(a)) e.setAttribute(k, String(v));
      e.setAttribute('class', 'tick');
      if (text !== undefined) e.textContent = text;
      axes.appendChild(e);
    };
    for (const [u, label] of xs) {
      const x = G.ml + ((u - view.u) / view.w) * G.pw;
      if (x < G.ml - 0.5 || x > G.ml + G.pw + 0.5) continue;
      add('line', { x1: x, y1: yb, x2: x, y2: yb + 5 });
      add('text', { x, y: yb + 18, 'text-anchor': 'middle', stroke: 'none' }, label);
    }
    for (const [v, label] of ys) {
      const y = G.mt + ((v - view.v) / view.h) * G.ph;
      if (y < G.mt - 0.5 || y > yb + 0.5) continue;
      add('line', { x1: G.ml - 5, y1: y, x2: G.ml, y2: y });
      add('text', { x: G.ml - 8, y: y + 4, 'text-anchor': 'end', stroke: 'none' }, label);
    }
  };
  let pending = false;
  const apply = () => {
    if (!plot) return;
    plot.setAttribute('viewBox', `${view.u} ${view.v} ${view.w} ${view.h}`);
    if (pending) return;
    pending = true;
    requestAnimationFrame(() => {
      pending = false;
      const s = view.w / G.pw;
      for (const m of marks) m.el.setAttribute('transform', `translate(${m.x} ${m.y}) scale(${s})`);
      drawAxes();
    });
  };
  const clampView = () => {
    const minW = Math.min(F.width, 8), maxW = F.width;
    view.w = Math.max(minW, Math.min(maxW, view.w));
    view.h = view.w * (F.height / F.width);
    view.u = Math.max(0, Math.min(F.width - view.w, view.u));
    view.v = Math.max(0, Math.min(F.height - view.h, view.v));
  };
  const outer = document.getElementById('map') as unknown as SVGSVGElement | null;
  /** The plot viewport on screen (the nested <svg>'s bounding box would include clipped overflow). */
  const plotRect = () => {
    const m = outer!.getScreenCTM()!;
    return { left: m.e + G.ml * m.a, top: m.f + G.mt * m.d, width: G.pw * m.a, height: G.ph * m.d };
  };
  /** Plot coordinates under a client point. */
  const toPlot = (cx: number, cy: number): [number, number] => {
    const r = plotRect();
    return [view.u + ((cx - r.left) / r.width) * view.w, view.v + ((cy - r.top) / r.height) * view.h];
  };
  const zoomAt = (cx: number, cy: number, f: number) => {
    const [u, v] = toPlot(cx, cy);
    const w = view.w / f;
    const cw = Math.max(Math.min(F.width, 8), Math.min(F.width, w));
    const g = view.w / cw;
    view = { u: u - (u - view.u) / g, v: v - (v - view.v) / g, w: cw, h: cw * (F.height / F.width) };
    clampView();
    apply();
  };
  const panTo = (k: string) => {
    if (!plot) return;
    const m = marks.find((q) => q.el.getAttribute('data-k') === k);
    let x: number | null = null, y: number | null = null;
    if (m) { x = m.x; y = m.y; } else {
      const e = plot.querySelector(`[data-k="${CSS.escape(k)}"]`) as SVGGraphicsElement | null;
      if (e && e.getBBox) { const b = e.getBBox(); x = b.x + b.width / 2; y = b.y + b.height / 2; }
    }
    if (x === null || y === null) return;
    if (x >= view.u && x <= view.u + view.w && y >= view.v && y <= view.v + view.h) return;
    view.u = x - view.w / 2; view.v = y - view.h / 2;
    clampView();
    apply();
  };
  const readout = document.getElementById('map-readout');
  const hoverData: (Float32Array | Int32Array)[][] = D.hover.map(() => []);
  const decode = async (b64: string, isInt: boolean): Promise<Float32Array | Int32Array> => {
    const bin = atob(b64);
    const bytes = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) bytes[i] = bin.charCodeAt(i);
    const ds = new DecompressionStream('deflate-raw');
    const buf = await new Response(new Blob([bytes]).stream().pipeThrough(ds)).arrayBuffer();
    return isInt ? new Int32Array(buf) : new Float32Array(buf);
  };
  D.hover.forEach((L, i) => {
    const parts = L.b64.split(',');
    Promise.all(parts.map((p) => decode(p, L.mode === 'label'))).then((arrs) => { hoverData[i] = arrs; }).catch(() => { hoverData[i] = []; });
  });
  const pointerText = (u: number, v: number): string => {
    const c = Math.floor(u), r = Math.floor(v);
    if (c < 0 || r < 0 || c >= F.width || r >= F.height) return '';
    const t = F.transform;
    const X = t[0] + (c + 0.5) * t[1] + (r + 0.5) * t[2], Y = t[3] + (c + 0.5) * t[4] + (r + 0.5) * t[5];
    const xy = D.geographic ? `${X.toFixed(6)}, ${Y.toFixed(6)}` : `${fmt(X, 9)}, ${fmt(Y, 9)}`;
    const f = F.factor, i = Math.floor(c / f), j = Math.floor(r / f), p = j * F.dw + i;
    const bits: string[] = [
      ...(D.interpolated ? [] : [f > 1 ? `cell (${c}, ${r}), block of ${f}×${f}` : `cell (${c}, ${r})`]),
      `x, y ${xy}${D.xyUnit ? ' ' + D.xyUnit : ''}`,
    ];
    D.hover.forEach((L, q) => {
      const a = hoverData[q];
      if (!a || !a.length) return;
      if (L.mode === 'exact') { const val = a[0][p]; bits.push(`${L.label} ${val === val ? fmt(val, 7) : 'nodata'}${val === val && L.unit ? ' ' + L.unit : ''}`); }
      else if (L.mode === 'range') {
        const lo = a[0][p], hi = a[1][p];
        bits.push(lo === lo ? `${L.label} ${fmt(lo, 7)} to ${fmt(hi, 7)}${L.unit ? ' ' + L.unit : ''} in block` : `${L.label} nodata`);
      } else { const id = a[0][p]; if (id > 0) bits.push(`${L.prefix || ''}${id}`); }
    });
    return bits.join(' · ');
  };
  if (plot) {
    let drag: { x: number; y: number; u: number; v: number; moved: boolean } | null = null;
    const pointers = new Map<number, { x: number; y: number }>();
    let pinch: { d: number; w: number } | null = null;
    plot.addEventListener('wheel', (ev) => { ev.preventDefault(); zoomAt(ev.clientX, ev.clientY, Math.exp(-ev.deltaY * 0.0015)); }, { passive: false });
    plot.addEventListener('pointerdown', (ev) => {
      pointers.set(ev.pointerId, { x: ev.clientX, y: ev.clientY });
      dragged = false;
      if (pointers.size === 2) {
        const [a, b] = Array.from(pointers.values());
        pinch = { d: Math.hypot(a.x - b.x, a.y - b.y), w: view.w };
        drag = null;
      } else drag = { x: ev.clientX, y: ev.clientY, u: view.u, v: view.v, moved: false };
    });
    plot.addEventListener('pointermove', (ev) => {
      if (pointers.has(ev.pointerId)) pointers.set(ev.pointerId, { x: ev.clientX, y: ev.clientY });
      if (pinch && pointers.size === 2) {
        const [a, b] = Array.from(pointers.values());
        const d = Math.hypot(a.x - b.x, a.y - b.y);
        const target = pinch.w * (pinch.d / Math.max(1, d));
        zoomAt((a.x + b.x) / 2, (a.y + b.y) / 2, view.w / target);
        dragged = true;
        return;
      }
      if (drag) {
        const dx = ev.clientX - drag.x, dy = ev.clientY - drag.y;
        if (!drag.moved && Math.hypot(dx, dy) > 4) { drag.moved = true; dragged = true; plot.classList.add('dragging'); plot.setPointerCapture(ev.pointerId); hideTip(); }
        if (drag.moved) {
          const r = plotRect();
          view.u = drag.u - (dx / r.width) * view.w;
          view.v = drag.v - (dy / r.height) * view.h;
          clampView();
          apply();
          return;
        }
      }
      if (readout) { const [u, v] = toPlot(ev.clientX, ev.clientY); readout.textContent = pointerText(u, v); }
    });
    const end = (ev: PointerEvent) => {
      pointers.delete(ev.pointerId);
      if (pointers.size < 2) pinch = null;
      drag = null;
      plot.classList.remove('dragging');
      setTimeout(() => { dragged = false; }, 0);
    };
    plot.addEventListener('pointerup', end);
    plot.addEventListener('pointercancel', end);
    plot.addEventListener('pointerleave', () => { if (readout) readout.textContent = ''; });
  }
  document.querySelectorAll('[data-zoom]').forEach((b) => b.addEventListener('click', () => {
    const z = b.getAttribute('data-zoom');
    if (!plot) return;
    if (z === 'reset') { view = { u: 0, v: 0, w: F.width, h: F.height }; apply(); return; }
    const r = plotRect();
    zoomAt(r.left + r.width / 2, r.top + r.height / 2, z === 'in' ? 1.6 : 1 / 1.6);
  }));
  document.querySelectorAll('input[data-toggle]').forEach((inp) => inp.addEventListener('change', () => {
    const id = inp.getAttribute('data-toggle')!;
    const on = (inp as HTMLInputElement).checked;
    document.querySelectorAll(`.fig-map [data-layer="${CSS.escape(id)}"]`).forEach((g) => {
      if (on) g.removeAttribute('display'); else g.setAttribute('display', 'none');
    });
  }));

  // ---------- tables ----------
  const PAGE = 250;
  for (const T of D.tables) {
    const host = document.getElementById(`tbl-${T.id}`);
    if (!host) continue;
    const table = document.createElement('table');
    table.className = 'data';
    table.id = `table-${T.id}`;
    const cap = document.createElement('caption');
    cap.className = 'sr';
    cap.textContent = T.caption;
    table.appendChild(cap);
    const thead = document.createElement('thead');
    const hr = document.createElement('tr');
    let order = T.rows.map((_, i) => i);
    let shown = Math.min(PAGE, order.length);
    let sortCol = -1, sortDir = 1;
    const tbody = document.createElement('tbody');
    const rowEls = new Map<number, HTMLTableRowElement>();
    const more = document.createElement('button');
    more.type = 'button';
    const cell = (v: string | number | null, c: Col) => {
      const td = document.createElement('td');
      if (c.type !== 'text') td.className = 'num';
      td.textContent = c.type === 'text' ? (v === null ? '—' : String(v)) : c.type === 'int' ? (v === null ? '—' : String(v))
        : c.decimals !== undefined && typeof v === 'number' && isFinite(v) ? String(Number(v.toFixed(c.decimals))).replace('-', '−') : fmt(v, c.digits || 6);
      return td;
    };
    const render = () => {
      tbody.textContent = '';
      rowEls.clear();
      const frag = document.createDocumentFragment();
      for (let q = 0; q < shown; q++) {
        const i = order[q];
        const tr = document.createElement('tr');
        const k = T.keys[i];
        if (k) tr.setAttribute('data-k', k);
        tr.tabIndex = 0;
        T.columns.forEach((c, j) => tr.appendChild(cell(T.rows[i][j], c)));
        if (k && k === selected) tr.classList.add('sel');
        rowEls.set(i, tr);
        frag.appendChild(tr);
      }
      tbody.appendChild(frag);
      more.hidden = shown >= order.length;
      more.textContent = `show all ${order.length} rows`;
    };
    T.columns.forEach((c, j) => {
      const th = document.createElement('th');
      th.scope = 'col';
      const b = document.createElement('button');
      b.type = 'button';
      b.innerHTML = `${esc(c.label)}${c.unit ? ` <span class="unit">[${esc(c.unit)}]</span>` : ''}`;
      b.addEventListener('click', () => {
        sortDir = sortCol === j ? -sortDir : 1;
        sortCol = j;
        const num = c.type !== 'text';
        order.sort((a, bb) => {
          const x = T.rows[a][j], y = T.rows[bb][j];
          if (x === null && y === null) return a - bb;
          if (x === null) return 1;
          if (y === null) return -1;
          const d = num ? (Number(x) - Number(y)) : String(x).localeCompare(String(y));
          return d === 0 ? a - bb : d * sortDir;
        });
        hr.querySelectorAll('th').forEach((h) => h.removeAttribute('aria-sort'));
        th.setAttribute('aria-sort', sortDir > 0 ? 'ascending' : 'descending');
        render();
      });
      th.appendChild(b);
      hr.appendChild(th);
    });
    thead.appendChild(hr);
    table.appendChild(thead);
    table.appendChild(tbody);
    tbody.addEventListener('click', (ev) => {
      const tr = (ev.target as Element).closest('tr');
      const k = tr && tr.getAttribute('data-k');
      if (k) select(selected === k ? null : k, 'table');
    });
    tbody.addEventListener('keydown', (ev) => {
      if ((ev as KeyboardEvent).key !== 'Enter' && (ev as KeyboardEvent).key !== ' ') return;
      const tr = (ev.target as Element).closest('tr');
      const k = tr && tr.getAttribute('data-k');
      if (k) { ev.preventDefault(); select(selected === k ? null : k, 'table'); }
    });
    tbody.addEventListener('pointerover', (ev) => {
      const tr = (ev.target as Element).closest('tr');
      const k = tr && tr.getAttribute('data-k');
      document.querySelectorAll('.fig .hov').forEach((e) => e.classList.remove('hov'));
      if (k) byKey(k).forEach((e) => { if (e.tagName !== 'TR') e.classList.add('hov'); });
    });
    more.addEventListener('click', () => { shown = order.length; render(); });
    const wrap = document.createElement('div');
    wrap.className = 'tablewrap';
    wrap.appendChild(table);
    host.appendChild(wrap);
    const bar = document.createElement('div');
    bar.className = 'tablebar';
    bar.appendChild(more);
    const dl = document.createElement('button');
    dl.type = 'button';
    dl.textContent = 'download these rows (CSV)';
    dl.addEventListener('click', () => {
      const q = (v: string | number | null) => { const s = v === null ? '' : String(v); return /[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s; };
      const lines = [T.columns.map((c) => q(c.unit ? `${c.label} [${c.unit}]` : c.label)).join(',')];
      for (const i of order) lines.push(T.rows[i].map(q).join(','));
      const a = document.createElement('a');
      a.href = URL.createObjectURL(new Blob([lines.join('\n') + '\n'], { type: 'text/csv' }));
      a.download = `${T.id}.csv`;
      document.body.appendChild(a);
      a.click();
      setTimeout(() => { URL.revokeObjectURL(a.href); a.remove(); }, 0);
    });
    bar.appendChild(dl);
    host.appendChild(bar);
    tableApi[T.id] = {
      reveal: (k: string) => {
        const i = T.keys.indexOf(k);
        if (i < 0) return null;
        const pos = order.indexOf(i);
        if (pos >= shown) { shown = pos + 1; render(); }
        return rowEls.get(i) || null;
      },
    };
    render();
  }
  document.documentElement.setAttribute('data-ready', '1');
}
