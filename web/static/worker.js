// The worker: runs the gapbook engine (Go compiled to WebAssembly) and
// forwards the page's requests to it. Messages to the page are posted by
// the Go side itself (JSON text). The first message carries the compiled
// WebAssembly.Module, so a restart after a cancel costs no download.
'use strict';
if (typeof self.Go === 'undefined') importScripts('wasm_exec.js');
let queue = [];
let started = false;
self.onmessage = async (e) => {
  if (!started) {
    started = true;
    const go = new Go();
    try {
      const instance = await WebAssembly.instantiate(e.data.module, go.importObject);
      // The engine ends only when it failed (out of memory, a fatal error):
      // tell the page, which starts a fresh one.
      go.run(instance).then(() => self.postMessage(JSON.stringify({ type: 'exit' })));
    } catch (err) {
      self.postMessage(JSON.stringify({ type: 'fatal', error: 'the engine did not start: ' + err }));
      return;
    }
    const q = queue; queue = null;
    for (const m of q) self.gapbookHandle(m);
    return;
  }
  if (queue) queue.push(e.data); else self.gapbookHandle(e.data);
};
