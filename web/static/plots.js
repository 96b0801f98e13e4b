// Downloads of what a cell shows: tables as CSV and as SVG text tables,
// plots and colour maps as SVG.

import { $, download, el, notice, text } from './state.js';
import { ask } from './bridge.js';

// Tables get CSV, plots and colour maps SVG downloads.
export function addExports(box, v) {
  box.querySelectorAll('table.data').forEach((t, i) => {
    const name = v.tables[i] || 'table';
    t.after(el('p', { class: 'export' }, el('button', { type: 'button', onclick: async () => {
      try {
        const r = await ask('csv', { cell: v.id, table: name });
        download(`${v.id}-${name}.csv`, r.csv, 'text/csv');
      } catch (e) { notice(e.message, 'error'); }
    } }, 'CSV'), el('button', { type: 'button', onclick: () => download(`${v.id}-${name}.svg`, tableSVG(t), 'image/svg+xml') }, 'SVG')));
  });
  box.querySelectorAll('figure').forEach((f, i) => {
    const svg = f.querySelector('svg');
    if (!svg) return;
    f.append(el('p', { class: 'export' }, el('button', { type: 'button', onclick: () => download(`${v.id}-figure${i + 1}.svg`, svg.outerHTML, 'image/svg+xml') }, 'SVG')));
  });
}

// tableSVG draws the shown table as text in an SVG image (for slides).
export function tableSVG(t) {
  const rows = [...t.rows].map((r) => [...r.cells].map((c) => c.textContent));
  const w = 110, h = 20;
  const cols = Math.max(...rows.map((r) => r.length));
  const esc = (s) => s.replace(/[&<>"]/g, (ch) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;' }[ch]));
  let body = '';
  rows.forEach((r, i) => r.forEach((c, j) => {
    body += `<text x="${j * w + w - 6}" y="${i * h + 15}" text-anchor="end"${i === 0 ? ' font-weight="bold"' : ''}>${esc(c)}</text>`;
  }));
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${cols * w}" height="${rows.length * h}" font-family="sans-serif" font-size="12"><rect width="100%" height="100%" fill="#fff"/>${body}</svg>`;
}
