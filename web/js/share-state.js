// The whole input state in the URL hash: JSON -> deflate-raw -> base64url (pure, async).
// Reading is defensive: a malformed or outdated link restores what it can and says what not.

import { compactScheme, readScheme } from './scheme-spec.js';

export const STATE_VERSION = 1;
export const HASH_PREFIX = '#s=';
export const LINK_LIMIT = 8000;   // characters of a link we trust mail and chat tools to keep

export function toShared(state) {
  const sp = state.spectrumInput;
  let spectrum;
  if (sp.mode === 'model') spectrum = { mode: 'model', kind: sp.model.kind, n: sp.model.n, params: sp.model.params };
  else if (sp.mode === 'text') spectrum = { mode: 'text', text: sp.text };
  else spectrum = { mode: 'values', name: sp.file?.name || 'uploaded', values: state.spectrum?.values || [] };
  return {
    v: STATE_VERSION,
    a: compactScheme(state.schemeA),
    b: state.compare ? compactScheme(state.schemeB) : null,
    bDraft: state.compare ? undefined : compactScheme(state.schemeB),
    compare: !!state.compare,
    layout: state.layout,
    spectrum,
    h: state.h,
    safety: state.safety,
    view: state.view,
    tol: state.tol,
    per: state.per,
  };
}

function bytesToBase64url(bytes) {
  let s = '';
  for (let i = 0; i < bytes.length; i += 0x8000) s += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(s).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
}

function base64urlToBytes(text) {
  const b64 = text.replace(/-/g, '+').replace(/_/g, '/');
  const bin = atob(b64 + '='.repeat((4 - (b64.length % 4)) % 4));
  const out = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
  return out;
}

async function pipe(bytes, stream) {
  const blob = new Blob([bytes]);
  const buf = await new Response(blob.stream().pipeThrough(stream)).arrayBuffer();
  return new Uint8Array(buf);
}

export async function encodeShared(obj) {
  const json = new TextEncoder().encode(JSON.stringify(obj));
  const packed = await pipe(json, new CompressionStream('deflate-raw'));
  return bytesToBase64url(packed);
}

export async function decodeShared(text) {
  let bytes;
  try {
    bytes = base64urlToBytes(text);
  } catch {
    throw new Error('the link is not readable (it may have been cut off or changed)');
  }
  let json;
  try {
    json = new TextDecoder().decode(await pipe(bytes, new DecompressionStream('deflate-raw')));
  } catch {
    throw new Error('the link is not readable (it may have been cut off or changed)');
  }
  try {
    return JSON.parse(json);
  } catch {
    throw new Error('the link holds no readable configuration');
  }
}

const finitePos = (x) => typeof x === 'number' && Number.isFinite(x) && x > 0;
const isPair = (p) => Array.isArray(p) && p.length === 2 && p.every((v) => typeof v === 'number' && Number.isFinite(v));
const isBox = (b) => Array.isArray(b) && b.length === 2 && isPair(b) && b[0] < b[1];

// Turn shared data (from a link or a saved file) into a state patch and a list of problems.
export function fromShared(obj, defaults) {
  const problems = [];
  const patch = {};
  if (!obj || typeof obj !== 'object' || Array.isArray(obj)) {
    return { patch, problems: ['the configuration is not an object; nothing could be read'] };
  }
  if (obj.v !== STATE_VERSION) {
    problems.push(obj.v === undefined
      ? 'the configuration has no version; reading it as the current version'
      : `the configuration is version ${JSON.stringify(obj.v)}, this page reads version ${STATE_VERSION}; the parts it recognises were restored`);
  }
  const [a, pa] = readScheme(obj.a, defaults.schemeA.name);
  if (a) patch.schemeA = a;
  if (pa || !a) problems.push(`scheme A ${pa || 'could not be read'}; ${a ? 'the rest of it was kept' : 'the default was kept'}`);
  const bObj = obj.b ?? obj.bDraft;
  if (bObj !== undefined && bObj !== null) {
    const [b, pb] = readScheme(bObj, defaults.schemeB.name);
    if (b) patch.schemeB = b;
    if (pb || !b) problems.push(`scheme B ${pb || 'could not be read'}`);
  }
  if (typeof obj.compare === 'boolean') patch.compare = obj.compare && obj.b !== null;
  else if (obj.compare !== undefined) problems.push('the compare switch could not be read');
  if (obj.layout === 'overlay' || obj.layout === 'side') patch.layout = obj.layout;
  const sp = obj.spectrum;
  if (sp && typeof sp === 'object') {
    if (sp.mode === 'model' && typeof sp.kind === 'string' && Number.isInteger(sp.n) && sp.n > 0) {
      const params = sp.params && typeof sp.params === 'object' && !Array.isArray(sp.params) ? sp.params : {};
      patch.spectrumInput = { ...defaults.spectrumInput, mode: 'model', model: { kind: sp.kind, n: sp.n, params } };
    } else if (sp.mode === 'text' && typeof sp.text === 'string') {
      patch.spectrumInput = { ...defaults.spectrumInput, mode: 'text', text: sp.text };
    } else if (sp.mode === 'values' && Array.isArray(sp.values) && sp.values.length && sp.values.every(isPair)) {
      const name = typeof sp.name === 'string' ? sp.name.slice(0, 200) : 'uploaded';
      patch.spectrumInput = { ...defaults.spectrumInput, mode: 'file', file: { name, kind: 'list', restored: true } };
      patch.restoredValues = sp.values;
    } else {
      problems.push('the spectrum could not be read; the demo spectrum was kept');
    }
  } else if (sp !== undefined) {
    problems.push('the spectrum could not be read; the demo spectrum was kept');
  }
  if (obj.h !== undefined && obj.h !== null) {
    if (finitePos(obj.h)) patch.h = obj.h;
    else problems.push('the step h could not be read');
  }
  if (obj.safety !== undefined) {
    if (finitePos(obj.safety) && obj.safety <= 1) patch.safety = obj.safety;
    else problems.push('the safety factor could not be read (it must lie in (0, 1])');
  }
  if (obj.view !== undefined && obj.view !== null) {
    if (obj.view && isBox(obj.view.xlim) && isBox(obj.view.ylim)) patch.view = { xlim: obj.view.xlim, ylim: obj.view.ylim };
    else problems.push('the plot view could not be read; the region is fitted instead');
  }
  // tol and per came later than version 1's first links: missing means the defaults
  if (obj.tol !== undefined) {
    if (finitePos(obj.tol) && obj.tol < 1) patch.tol = obj.tol;
    else problems.push('the accuracy tolerance could not be read (it must lie in (0, 1)); the default was kept');
  }
  if (obj.per !== undefined) {
    if (obj.per === 'step' || obj.per === 'unit-time') patch.per = obj.per;
    else problems.push('the tolerance basis (per step or per unit time) could not be read; per step was kept');
  }
  return { patch, problems };
}
