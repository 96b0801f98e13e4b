// Files and links: open, save, share as a link, the printable report and
// the standalone page.

import { $, docText, download, notice, state } from './state.js';
import { ask } from './bridge.js';
import { autosave, renderCells, showProblems } from './cells.js';
import { renderRuns } from './runs.js';

export async function compress(textIn) {
  const s = new Blob([textIn]).stream().pipeThrough(new CompressionStream('deflate-raw'));
  const bytes = new Uint8Array(await new Response(s).arrayBuffer());
  let bin = '';
  for (let i = 0; i < bytes.length; i += 0x8000) bin += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(bin).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
}

export async function decompress(b64) {
  const bin = atob(b64.replace(/-/g, '+').replace(/_/g, '/'));
  const bytes = Uint8Array.from(bin, (c) => c.charCodeAt(0));
  const s = new Blob([bytes]).stream().pipeThrough(new DecompressionStream('deflate-raw'));
  return new Response(s).text();
}

export async function shareLink() {
  const url = location.href.split('#')[0] + '#nb=' + await compress(docText());
  state.lastShare = url;
  try {
    await navigator.clipboard.writeText(url);
    notice(`Link copied (${url.length} characters). It carries the notebook itself; nothing is sent anywhere.`, 'ok');
  } catch {
    notice('Copy this link: ' + url, 'ok');
  }
  history.replaceState(null, '', url);
}

export function saveFile() {
  const name = (state.doc.title || 'notebook').replace(/[^A-Za-z0-9 _-]/g, '').trim().replace(/\s+/g, '-').slice(0, 60) || 'notebook';
  download(name + '.gapbook', docText() + '\n', 'application/json');
}

export async function openText(t, source) {
  let doc;
  try { doc = JSON.parse(t); } catch (e) { notice('This file is not a gapbook notebook (not JSON): ' + e.message, 'error'); return false; }
  let r;
  try {
    r = await ask('show', { doc: t });
  } catch (e) { notice(e.message, 'error'); return false; }
  state.doc = doc;
  state.doc.cells = Array.isArray(state.doc.cells) ? state.doc.cells : [];
  state.source = source;
  state.views.clear();
  for (const v of r.cells) state.views.set(v.id, v);
  renderCells();
  showProblems(r.problems);
  renderRuns(r.runs);
  autosave();
  return true;
}

export async function report() {
  try {
    const r = await ask('report');
    const w = window.open(URL.createObjectURL(new Blob([r.html], { type: 'text/html' })), '_blank');
    if (!w) download('report.html', r.html, 'text/html');
  } catch (e) { notice(e.message, 'error'); }
}

export async function standalone() {
  if (state.standalone) {
    download('gapbook-standalone.html', state.pristine.replace(
      /(<script type="application\/json" id="src-notebook">)[\s\S]*?(<\/script>)/, (m, a, b) => a + docText().replace(/</g, '\\u003c') + b), 'text/html');
    return;
  }
  try {
    const r = await fetch('standalone', { method: 'POST', body: docText() });
    if (!r.ok) throw new Error(await r.text());
    download('gapbook-standalone.html', await r.blob(), 'text/html');
  } catch (e) { notice('The standalone page could not be made: ' + e.message, 'error'); }
}
