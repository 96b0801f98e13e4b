// Computing: runs of the engine with progress, stopping a run, and
// merging the results the engine saved into the page's notebook.

import { $, cellOf, domID, notice, state, STATUS_WORDS } from './state.js';
import { ask, failPending, restartWorker, syncedHistory } from './bridge.js';
import { applyView, applyViews, changed, refreshStates } from './cells.js';
import { renderRuns } from './runs.js';

export async function runCells(only, opts = {}) {
  if (state.running) { notice('A computation is running; stop it first (Esc).', 'warn'); return null; }
  const ids = only || state.doc.cells.map((c) => c.id);
  const run = { cells: new Set(ids) };
  state.running = run;
  $('stop').disabled = false;
  document.body.classList.add('busy');
  const started = performance.now();
  try {
    const r = await ask('run', { only: only || undefined, record: opts.record, override: opts.override }, (m) => {
      if (state.running !== run) return;
      if (m.type === 'progress') showProgress(m);
      else if (m.type === 'cell') { applyViews([m.view], true); noteFirstResults(); }
    });
    if (state.running !== run) return null;
    mergeResults(r);
    applyViews(r.cells, true);
    renderRuns(r.runs);
    noteFirstResults();
    const secs = ((performance.now() - started) / 1000).toFixed(2);
    const failed = r.cells.filter((c) => c.status === 'error').length;
    notice(failed ? `Computed in ${secs} s; ${failed} cell(s) failed.` : `Computed in ${secs} s.`, failed ? 'warn' : 'ok');
    changed();
    return r;
  } catch (e) {
    if (state.running === run) notice(e.message, 'error');
    return null;
  } finally {
    if (state.running === run) endRun();
  }
}

export function noteFirstResults() {
  if (!state.firstResults) state.firstResults = performance.now();
}

// mark records when a stage of the start was reached (ms since navigation).
export function mark(name) { state.marks[name] = Math.round(performance.now()); }

export function endRun() {
  state.running = null;
  $('stop').disabled = true;
  document.body.classList.remove('busy');
  if (state.refreshAfterRun) { state.refreshAfterRun = false; refreshStates(); }
}

export function showProgress(m) {
  if (state.running) state.running.current = m.cell;
  const sec = document.getElementById(domID(m.cell));
  if (!sec) return;
  sec.dataset.status = 'running';
  sec.querySelector('.status').textContent = STATUS_WORDS.running;
  const bar = sec.querySelector('.bar');
  bar.hidden = false;
  bar.value = m.fraction;
  sec.querySelector('.progress-msg').textContent = m.message || '';
}

// mergeResults takes the results and history the engine saved, keeping
// any edits made while it computed (their hashes mark them stale). The
// engine's copy has them already.
export function mergeResults(done) {
  for (const [id, results] of Object.entries(done.results || {})) {
    const mine = cellOf(id);
    if (mine) mine.results = results;
  }
  if (done.history) { state.doc.history = done.history; syncedHistory(); }
}

export function stop() {
  if (!state.running) return;
  const run = state.running;
  state.running = null;
  restartWorker(); // a message cannot reach a busy engine; a fresh one can
  failPending('stopped');
  for (const id of run.cells) {
    const sec = document.getElementById(domID(id));
    const v = state.views.get(id);
    if (sec && v) applyView(sec, v);
    else if (sec) { sec.dataset.status = 'stale'; sec.querySelector('.status').textContent = 'stale'; sec.querySelector('.bar').hidden = true; }
  }
  endRun();
  notice('Stopped. The engine was restarted; the notebook is as it was.', 'warn');
  refreshStates();
}
