// gapbook page: shows the notebook, edits it, and asks the engine in a Web
// Worker to compute. This module starts the page and wires its controls;
// see state.js, bridge.js, cells.js, compute.js, runs.js, files.js and
// plots.js for the rest. Plain modern JavaScript as ES modules, no bundler.

import { $, AUTOSAVE, cellOf, docText, el, notice, state, text } from './state.js';
import { ask, loadModule, restartWorker, startWorker } from './bridge.js';
import { addCell, autosave, changed, deleteCell, duplicateCell, focusCell, moveCell, undoDelete } from './cells.js';
import { mark, noteFirstResults, runCells, stop } from './compute.js';
import { compareRuns, fillSeriesInputs, runSeries } from './runs.js';
import { decompress, openText, report, saveFile, shareLink, standalone } from './files.js';

export async function initialDoc() {
  const h = location.hash;
  if (h.startsWith('#nb=')) {
    try { return { text: await decompress(h.slice(4)), source: 'link', note: 'Opened the notebook carried by the link.' }; }
    catch (e) { notice('The link does not carry a readable notebook: ' + e.message, 'error'); }
  }
  let served = null;
  if (state.standalone) served = text('src-notebook');
  else {
    const r = await fetch('notebook.gapbook');
    served = r.ok ? await r.text() : null;
  }
  const source = state.standalone ? 'standalone' : 'served';
  try {
    const a = JSON.parse(localStorage.getItem(AUTOSAVE) || 'null');
    if (a && a.source === source && a.doc && a.doc !== served && !state.standalone) {
      return { text: a.doc, source, restored: served, note: `Restored your work from ${a.at.replace('T', ' ').slice(0, 19)} UTC.` };
    }
  } catch { /* a broken autosave is ignored */ }
  return { text: served || '{"gapbook":2,"title":"","cells":[]}', source };
}

export async function boot() {
  const t0 = performance.now();
  try {
    const [mod, init] = await Promise.all([loadModule().then((m) => (mark('compiled'), m)), initialDoc()]);
    state.module = mod;
    startWorker();
    await state.ready;
    mark('ready');
    $('caution').replaceChildren(el('strong', { text: 'Caution. ' }), state.caution);
    $('add-kind').replaceChildren(...[...state.kinds.values()].map((k) => el('option', { value: k.name, title: k.doc, text: k.name })));
    $('add-kind').value = 'note';
    $('booting')?.remove();
    if (!await openText(init.text, init.source)) return;
    mark('shown');
    // Saved results or rendered notes are on screen: those are first results.
    if ([...state.views.values()].some((v) => v.status === 'ok' || v.body)) noteFirstResults();
    if (init.note) {
      // A lasting banner: the notices that follow must not hide where the notebook came from.
      const banner = el('p', { id: 'restored', class: 'restored', role: 'status' }, el('span', { text: init.note }));
      const close = () => banner.remove();
      if (init.restored) {
        banner.append(' ', el('button', { type: 'button', onclick: async () => {
          close();
          if (await openText(init.restored, init.source)) { notice('Opened the original notebook.', 'ok'); runCells(null); }
        } }, 'Open the original instead'));
      }
      banner.append(' ', el('button', { type: 'button', 'aria-label': 'Dismiss', onclick: close }, 'Dismiss'));
      $('notice').before(banner);
    }
    state.bootMs = performance.now() - t0;
    // Saved results are on screen now; recompute to bring every cell up to date.
    await runCells(null);
    if (state.standalone) reportReproduction();
    document.body.dataset.ready = 'true';
  } catch (e) {
    const b = $('booting');
    if (b) { b.textContent = e.message; b.className = 'cell-error'; }
    notice(e.message, 'error');
    document.body.dataset.ready = 'failed';
  }
}

export function reportReproduction() {
  const vs = [...state.views.values()].filter((v) => v.reproduced);
  const yes = vs.filter((v) => v.reproduced === 'yes').length;
  const box = el('p', { class: 'repro-summary', id: 'repro-summary', role: 'status' });
  box.dataset.yes = String(yes);
  box.dataset.total = String(vs.length);
  box.textContent = vs.length === 0 ? 'This page had no saved results to reproduce.'
    : yes === vs.length ? `All ${yes} saved results were reproduced on this computer.`
      : `${yes} of ${vs.length} saved results were reproduced; the others are marked.`;
  $('cells').before(box);
}

export function keys(e) {
  if (e.key === 'Escape' && state.running) { e.preventDefault(); stop(); return; }
  if (!e.altKey || e.ctrlKey || e.metaKey) return;
  const id = state.focus && cellOf(state.focus) ? state.focus : null;
  const act = {
    r: () => (e.shiftKey ? runCells(null) : id && runCells([id])),
    ArrowUp: () => id && moveCell(id, -1),
    ArrowDown: () => id && moveCell(id, 1),
    c: () => id && duplicateCell(id),
    Delete: () => id && deleteCell(id),
    u: undoDelete,
    n: () => addCell($('add-kind').value),
    s: saveFile,
    o: () => $('file').click(),
    h: () => $('toggle-runs').click(),
  }[e.key.length === 1 ? e.key.toLowerCase() : e.key];
  if (act) { e.preventDefault(); act(); }
}

export function wire() {
  $('run-all').addEventListener('click', () => runCells(null));
  $('stop').addEventListener('click', stop);
  $('open').addEventListener('click', () => $('file').click());
  $('file').addEventListener('change', async () => {
    const f = $('file').files[0];
    if (f && await openText(await f.text(), 'file')) { notice(`Opened ${f.name}.`, 'ok'); runCells(null); }
    $('file').value = '';
  });
  $('save').addEventListener('click', saveFile);
  $('share').addEventListener('click', shareLink);
  $('report').addEventListener('click', report);
  $('standalone').addEventListener('click', standalone);
  $('toggle-runs').addEventListener('click', () => {
    const open = document.body.classList.toggle('runs-hidden');
    $('toggle-runs').setAttribute('aria-expanded', String(!open));
  });
  $('add').addEventListener('click', () => addCell($('add-kind').value));
  $('undo').addEventListener('click', undoDelete);
  $('title').addEventListener('change', () => { state.doc.title = $('title').value; changed(); });
  $('run-form').addEventListener('submit', (e) => {
    e.preventDefault();
    runCells(null, { record: $('run-label').value.trim() || `run ${(state.runs || []).length + 1}` });
  });
  $('series-cell').addEventListener('change', fillSeriesInputs);
  $('series-form').addEventListener('submit', runSeries);
  $('compare').addEventListener('click', compareRuns);
  document.addEventListener('keydown', keys);
  window.addEventListener('hashchange', async () => {
    if (location.hash.startsWith('#nb=') && location.href !== state.lastShare) {
      if (await openText(await decompress(location.hash.slice(4)), 'link')) runCells(null);
    }
  });
}

// For tests and the curious (window.gapbook is the state): the page's
// main actions, to call from a console.
state.api = { ask, docText, restartWorker, runCells, focusCell, fillSeriesInputs, shareLink };

wire();
boot();
