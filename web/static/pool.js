// The pool: helper engines (more Web Workers running the same WebAssembly)
// that compute shares of the members of multi-member cells, the rows of a
// sweep, while the main engine computes its own share. The main engine
// then puts the cells together from every member (docs/architecture.md,
// "Members in the page"). The members finished so far are kept in the
// page, so that a stopped run does not compute them again.

import { state } from './state.js';
import { workerURL } from './bridge.js';

// poolSize is the number of engines that compute members at once, the main
// one included: ?workers=N in the address, otherwise one helper per core
// but one (at least one helper), plus the main engine.
export function poolSize() {
  const asked = Number(new URLSearchParams(location.search).get('workers'));
  if (Number.isInteger(asked) && asked >= 1) return Math.min(asked, 64);
  return Math.max(1, (navigator.hardwareConcurrency || 2) - 1) + 1;
}

// Helper is one helper engine; it is started on first use and kept, so its
// cache serves the next run.
class Helper {
  constructor() {
    this.worker = new Worker(workerURL());
    this.pending = new Map();
    this.nextId = 1;
    this.ready = new Promise((resolve, reject) => {
      this.worker.onmessage = (e) => {
        let m;
        try { m = JSON.parse(e.data); } catch { return; }
        if (m.type === 'ready') { resolve(); return; }
        if (m.type === 'fatal' || m.type === 'exit') { reject(new Error(m.error || 'the helper engine stopped')); this.fail('the helper engine stopped'); return; }
        const p = this.pending.get(m.id);
        if (!p) return;
        if (m.type === 'done') { this.pending.delete(m.id); p.resolve(m); }
        else if (m.type === 'error') { this.pending.delete(m.id); p.reject(new Error(m.error)); }
        else p.onEvent(m);
      };
    });
    this.worker.onerror = (e) => { e.preventDefault(); this.fail('the helper engine stopped: ' + (e.message || 'unknown error')); };
    this.worker.postMessage({ module: state.module });
  }

  async ask(req, onEvent) {
    await this.ready;
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject, onEvent });
      this.worker.postMessage(JSON.stringify({ id, ...req }));
    });
  }

  fail(why) {
    this.dead = true;
    for (const p of this.pending.values()) p.reject(new Error(why));
    this.pending.clear();
  }

  stop() { this.worker.terminate(); this.fail('stopped'); }
}

const helpers = [];

// helpersFor returns n helper engines, starting those missing and
// replacing any that stopped.
export function helpersFor(n) {
  for (let i = 0; i < helpers.length; i++) if (helpers[i].dead) helpers[i] = new Helper();
  while (helpers.length < n) helpers.push(new Helper());
  return helpers.slice(0, n);
}

// stopHelpers ends every helper at once (a stop); the next run starts
// fresh ones.
export function stopHelpers() {
  for (const h of helpers) h.stop();
  helpers.length = 0;
}

// The members the page has, by "cell hash row".
const KEEP = 20000;
const memberID = (m) => `${m.cell} ${m.hash} ${m.row}`;

export function keepMember(m) {
  state.members.delete(memberID(m));
  state.members.set(memberID(m), m);
  while (state.members.size > KEEP) state.members.delete(state.members.keys().next().value);
}

// membersOf returns the kept members of the pending cells.
export function membersOf(pending) {
  const want = new Set(pending.map((p) => `${p.cell} ${p.hash}`));
  return [...state.members.values()].filter((m) => want.has(`${m.cell} ${m.hash}`));
}

// forgetMembers drops the kept members of cells whose results are current
// (the engine has them cached and the notebook saved).
export function forgetMembers(done) {
  const ok = new Set(done.filter((c) => c.status === 'ok').map((c) => c.id));
  for (const [k, m] of state.members) if (ok.has(m.cell)) state.members.delete(k);
}
