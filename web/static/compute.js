// Computing: runs of the engine with progress, stopping a run, and
// merging the results the engine saved into the page's notebook.

import { $, cellOf, docText, domID, notice, state, STATUS_WORDS } from './state.js';
import { ask, failPending, restartWorker, syncedHistory } from './bridge.js';
import { applyView, applyViews, changed, refreshStates } from './cells.js';
import { renderRuns } from './runs.js';
import { forgetMembers, helpersFor, keepMember, membersOf, poolSize, stopHelpers } from './pool.js';

export async function runCells(only, opts = {}) {
  if (state.running) { notice('A computation is running; stop it first (Esc).', 'warn'); return null; }
  const ids = only || state.doc.cells.map((c) => c.id);
  const run = { cells: new Set(ids), members: new Map() };
  state.running = run;
  $('stop').disabled = false;
  document.body.classList.add('busy');
  const started = performance.now();
  const onMember = (m) => {
    if (state.running !== run || m.type !== 'member') return false;
    keepMember(m.member);
    memberProgress(run, m.member.cell);
    return true;
  };
  try {
    const pending = opts.override ? [] : await spread(run, only, onMember);
    if (state.running !== run) return null;
    const r = await ask('run', { only: only || undefined, record: opts.record, override: opts.override, members: pending.length ? membersOf(pending) : undefined }, (m) => {
      if (state.running !== run || onMember(m)) return;
      if (m.type === 'progress') showProgress(m);
      else if (m.type === 'cell') { applyViews([m.view], true); noteFirstResults(); }
    });
    if (state.running !== run) return null;
    mergeResults(r);
    applyViews(r.cells, true);
    renderRuns(r.runs);
    forgetMembers(r.cells);
    noteFirstResults();
    const secs = ((performance.now() - started) / 1000).toFixed(2);
    const failed = r.cells.filter((c) => c.status === 'error').length;
    const spreadNote = run.engines > 1 ? ` (members on ${run.engines} engines)` : '';
    notice(failed ? `Computed in ${secs} s${spreadNote}; ${failed} cell(s) failed.` : `Computed in ${secs} s${spreadNote}.`, failed ? 'warn' : 'ok');
    changed();
    return r;
  } catch (e) {
    if (state.running === run) notice(e.message, 'error');
    return null;
  } finally {
    if (state.running === run) endRun();
  }
}

// spread computes the members of the run's multi-member cells on the pool
// of engines, the main one and the helpers. The members are cut into
// shares, up to eight per engine, which the engines take one after the
// other as they finish the last: a slow member holds up only its own
// engine. It returns the cells whose members the page now has (the main
// run takes them); a share an engine failed on is left to the main run.
async function spread(run, only, onMember) {
  const plan = await ask('plan', { only: only || undefined });
  const pending = plan.pending || [];
  const total = pending.reduce((n, p) => n + p.members, 0);
  const size = poolSize();
  if (size < 2 || total < 2 || state.running !== run) return pending;
  const n = Math.min(size, total);
  run.engines = n;
  run.total = new Map(pending.map((p) => [p.cell, p.members]));
  for (const p of pending) memberProgress(run, p.cell, 0);
  const members = membersOf(pending);
  const onEvent = (m) => {
    if (state.running !== run || onMember(m)) return;
    if (m.type === 'progress' && !run.total.has(m.cell)) showProgress(m);
  };
  // Each engine runs one share at a time; a helper gets the notebook with
  // its first share and keeps it for the others.
  const doc = docText();
  const engines = [(f) => ask('run', f, onEvent), ...helpersFor(n - 1).map((h) => {
    let first = true;
    return (f) => h.ask({ op: 'run', ...f, ...(first ? (first = false, { doc }) : {}) }, onEvent);
  })];
  const shares = Math.min(Math.max(...pending.map((p) => p.members)), 8 * n);
  let next = 1;
  const t0 = performance.now();
  const took = [];
  const failed = [];
  await Promise.all(engines.map(async (compute, i) => {
    while (next <= shares && state.running === run) {
      const k = next++;
      try {
        await compute({ only: only || undefined, share: [k, shares], members });
      } catch (e) {
        failed.push(e.message);
        break;
      }
    }
    took[i] = Math.round(performance.now() - t0);
  }));
  // For the benchmark and the curious: when each engine ran out of shares (ms).
  state.lastSpread = { engines: n, members: total, shares, took };
  if (failed.length && state.running === run) notice(`${failed.length} of ${n} engines failed on a share (${failed[0]}); the main engine computes what they left.`, 'warn');
  return pending;
}

// memberProgress counts step more members done on a multi-member cell
// and shows how many of all are done.
function memberProgress(run, cell, step = 1) {
  const done = (run.members.get(cell) || 0) + step;
  run.members.set(cell, done);
  const total = run.total && run.total.get(cell);
  if (total) showProgress({ cell, fraction: done / total, message: `${done} of ${total} members done on ${run.engines} engines` });
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
  stopHelpers();
  failPending('stopped');
  for (const id of run.cells) {
    const sec = document.getElementById(domID(id));
    const v = state.views.get(id);
    if (sec && v) applyView(sec, v);
    else if (sec) { sec.dataset.status = 'stale'; sec.querySelector('.status').textContent = 'stale'; sec.querySelector('.bar').hidden = true; }
  }
  endRun();
  const kept = [...run.members.values()].reduce((n, k) => n + k, 0);
  notice('Stopped. The engine was restarted; the notebook is as it was.' +
    (kept ? ` ${kept} finished member${kept > 1 ? 's are' : ' is'} kept: the next run does not compute ${kept > 1 ? 'them' : 'it'} again.` : ''), 'warn');
  refreshStates();
}
