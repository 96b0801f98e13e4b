// The runs panel: the recorded history, comparisons of runs and series
// of values for one input.

import { $, cellOf, download, el, notice, state } from './state.js';
import { ask } from './bridge.js';
import { refreshStates } from './cells.js';
import { runCells } from './compute.js';

export function renderRuns(runs) {
  state.runs = runs || [];
  const list = $('run-list');
  list.replaceChildren(...state.runs.map((r, i) => el('li', {},
    el('label', {}, el('input', { type: 'checkbox', value: String(i), class: 'run-pick' }),
      el('span', { class: 'run-label', text: r.label || `run ${i + 1}` }),
      el('span', { class: 'run-meta', text: ` ${r.at.replace('T', ' ').replace('Z', ' UTC')} · ${r.ok} current${r.failed ? `, ${r.failed} failed` : ''}` })))).reverse());
  if (!state.runs.length) list.append(el('li', { class: 'empty', text: 'No runs recorded yet. Record one, or run a series of values.' }));
  const tables = [...new Set(state.runs.flatMap((r) => r.tables))];
  const sel = $('cmp-table');
  const cur = sel.value;
  sel.replaceChildren(el('option', { value: '', text: '(none)' }), ...tables.map((t) => el('option', { value: t, text: t })));
  if (tables.includes(cur)) sel.value = cur;
}

export async function compareRuns() {
  const runs = [...document.querySelectorAll('.run-pick:checked')].map((b) => Number(b.value)).sort((a, b) => a - b);
  if (!runs.length) { notice('Choose one or more runs to compare.', 'warn'); return; }
  const [cell, table] = ($('cmp-table').value || '/').split('/');
  try {
    const r = await ask('compare', { runs, cell, table, x: $('cmp-x').value.trim(), y: $('cmp-y').value.trim() });
    const box = $('comparison');
    box.hidden = false;
    box.replaceChildren(el('header', { class: 'cell-head' }, el('h2', { text: `${runs.length} run${runs.length > 1 ? 's' : ''} compared` }),
      el('span', { class: 'tools' }, el('button', { type: 'button', onclick: () => { box.hidden = true; } }, 'Close'))));
    const t = el('div', { class: 'rendered' });
    t.innerHTML = r.html;
    box.append(t, el('p', { class: 'export' }, el('button', { type: 'button', onclick: () => download('runs.csv', r.csv, 'text/csv') }, 'CSV')));
    if (r.plot) { const f = el('figure', { class: 'plot' }); f.innerHTML = r.plot; box.append(f); }
    if (r.plotError) box.append(el('p', { class: 'field-msg', text: r.plotError }));
    box.scrollIntoView({ block: 'start' });
  } catch (e) { notice(e.message, 'error'); }
}

export function fillSeriesCells() {
  const sel = $('series-cell');
  const cur = sel.value;
  sel.replaceChildren(...state.doc.cells.filter((c) => numericInputs(c).length).map((c) => el('option', { value: c.id, text: c.id })));
  if (cur && cellOf(cur)) sel.value = cur;
  fillSeriesInputs();
}

export function numericInputs(c) {
  const k = state.kinds.get(c.kind);
  return k ? k.inputs.filter((i) => i.type === 'number' || i.type === 'integer') : [];
}

export function fillSeriesInputs() {
  const c = cellOf($('series-cell').value);
  $('series-input').replaceChildren(...(c ? numericInputs(c) : []).map((i) => el('option', { value: i.name, text: i.name })));
}

export async function runSeries(e) {
  e.preventDefault();
  const cell = $('series-cell').value, input = $('series-input').value;
  const values = $('series-values').value.split(/[,;\s]+/).filter(Boolean).map(Number);
  if (!cell || !input || !values.length || values.some((v) => !Number.isFinite(v))) {
    notice('A series needs a cell, one of its numeric inputs and a list of numbers such as 1.5, 2, 3.', 'warn');
    return;
  }
  for (const v of values) {
    const r = await runCells(null, { record: `${cell}.${input} = ${v}`, override: { cell, input, value: v } });
    if (!r) return;
  }
  refreshStates(); // the page shows the document's own inputs again
}
