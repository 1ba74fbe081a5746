// The only module that talks to the network. Every call goes to the page's own origin.
// Errors come back as ApiError carrying the server's {field, message, ...} so the page can
// put the message next to the field it names.

export class ApiError extends Error {
  constructor(status, info) {
    super(info?.detail || info?.message || `request failed (${status})`);
    this.status = status;
    this.field = info?.field || null;
    this.info = info || {};
  }
}

// Requests in flight, on the root element: tests and a busy cursor can wait for 0.
let inFlight = 0;
function track(delta) {
  inFlight += delta;
  document.documentElement.dataset.requests = String(inFlight);
}

async function call(method, path, body, signal, isForm = false) {
  track(1);
  try {
    return await send(method, path, body, signal, isForm);
  } finally {
    track(-1);
  }
}

async function send(method, path, body, signal, isForm) {
  const opts = { method, signal, headers: {} };
  if (body !== undefined) {
    if (isForm) {
      opts.body = body;
    } else {
      opts.headers['content-type'] = 'application/json';
      opts.body = JSON.stringify(body);
    }
  }
  let resp;
  try {
    resp = await fetch(path, opts);
  } catch (err) {
    if (err?.name === 'AbortError') throw err;
    throw new ApiError(0, { field: 'server', message: 'the stepfence server did not answer; is it still running?' });
  }
  let data = null;
  try {
    data = await resp.json();
  } catch {
    data = null;
  }
  if (!resp.ok) {
    const info = data?.error || { field: 'server', message: `the server answered ${resp.status}` };
    throw new ApiError(resp.status, info);
  }
  return { status: resp.status, data };
}

const post = (path, body, signal) => call('POST', path, body, signal).then((r) => r.data);
const get = (path, signal) => call('GET', path, undefined, signal).then((r) => r.data);

export const fetchCatalogue = (signal) => get('/api/catalogue', signal);
export const fetchModels = (signal) => get('/api/spectrum/models', signal);
export const analyse = (scheme, view, grid, parts, signal) =>
  post('/api/analyse', view ? { scheme, view, grid, parts } : { scheme, grid, parts }, signal);
export const limit = (scheme, eigenvalues, safety, signal) =>
  post('/api/limit', { scheme, eigenvalues, safety, per_eigenvalue: true }, signal);
export const parseSpectrum = (text, signal) => post('/api/spectrum/parse', { text }, signal);
export const modelSpectrum = (kind, n, params, signal) =>
  post('/api/spectrum/model', { kind, n, params }, signal);
export const verify = (body, signal) => post('/api/verify', body, signal);
export const accuracy = (body, signal) => post('/api/accuracy', body, signal);
export const readJob = (id, signal) => get(`/api/jobs/${encodeURIComponent(id)}`, signal);
export const cancelJob = (id) => call('DELETE', `/api/jobs/${encodeURIComponent(id)}`).then((r) => r.data);

export async function uploadSpectrum(file, kind, signal) {
  const form = new FormData();
  form.append('file', file, file.name);
  form.append('kind', kind);
  const r = await call('POST', '/api/spectrum/upload', form, signal, true);
  return { job: r.status === 202, data: r.data };
}
