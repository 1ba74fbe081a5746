// Scheme input state <-> the spec the server reads (pure). No parsing of the user's text here:
// the server's strict parser reads it and names the field when it is wrong.

export const MODES = [
  { key: 'catalogue', label: 'Catalogue' },
  { key: 'rhosigma', label: 'ρ / σ' },
  { key: 'alphabeta', label: 'α / β' },
  { key: 'tableau', label: 'Butcher' },
  { key: 'stability', label: 'R(z)' },
  { key: 'pc', label: 'Pred–corr' },
];

export function blankScheme(name = 'bdf4') {
  return {
    mode: 'catalogue',
    name,
    rho: '',
    sigma: '',
    alpha: ['', ''],
    beta: ['', ''],
    A: [['', ''], ['', '']],
    b: ['', ''],
    c: ['', ''],
    stability: '',
    predictor: 'ab4',
    corrector: 'am4',
    m: 1,
    pcMode: 'PECE',
  };
}

export function specOf(s) {
  switch (s.mode) {
    case 'rhosigma':
      return { rho: s.rho, sigma: s.sigma };
    case 'alphabeta':
      return { alpha: s.alpha.slice(), beta: s.beta.slice() };
    case 'tableau': {
      const tableau = { A: s.A.map((r) => r.slice()), b: s.b.slice() };
      if (s.c.some((x) => String(x).trim() !== '')) tableau.c = s.c.slice();
      return { tableau };
    }
    case 'stability':
      return { stability: s.stability };
    case 'pc':
      return { predictor: s.predictor, corrector: s.corrector, m: Number(s.m), mode: s.pcMode };
    default:
      return s.name;
  }
}

// The fields of one mode, for the share link (the other tabs' drafts stay local).
export function compactScheme(s) {
  const keep = {
    catalogue: ['name'], rhosigma: ['rho', 'sigma'], alphabeta: ['alpha', 'beta'],
    tableau: ['A', 'b', 'c'], stability: ['stability'], pc: ['predictor', 'corrector', 'm', 'pcMode'],
  }[s.mode] || ['name'];
  const out = { mode: s.mode };
  for (const k of keep) out[k] = s[k];
  return out;
}

const isText = (x) => typeof x === 'string' && x.length <= 20000;
const isTextList = (x, max = 40) => Array.isArray(x) && x.length >= 1 && x.length <= max && x.every(isText);

// Read a scheme from untrusted (URL or file) data: returns [scheme, problem-or-null].
export function readScheme(obj, fallbackName) {
  const base = blankScheme(fallbackName);
  if (typeof obj === 'string') return [{ ...base, name: obj }, null];
  if (!obj || typeof obj !== 'object') return [null, 'is missing or not an object'];
  const mode = MODES.some((m) => m.key === obj.mode) ? obj.mode : null;
  if (!mode) return [null, `has an unknown kind ${JSON.stringify(obj.mode)}`];
  const out = { ...base, mode };
  const bad = [];
  const take = (k, ok) => {
    if (obj[k] === undefined) return;
    if (ok(obj[k])) out[k] = obj[k];
    else bad.push(k);
  };
  take('name', (x) => isText(x) && x.length <= 200);
  take('rho', isText);
  take('sigma', isText);
  take('alpha', isTextList);
  take('beta', isTextList);
  take('A', (x) => Array.isArray(x) && x.length >= 1 && x.length <= 16 && x.every((r) => isTextList(r, 16) && r.length === x.length));
  take('b', (x) => isTextList(x, 16));
  take('c', (x) => isTextList(x, 16));
  take('stability', isText);
  take('predictor', (x) => isText(x) && x.length <= 200);
  take('corrector', (x) => isText(x) && x.length <= 200);
  take('m', (x) => Number.isInteger(x) && x >= 1 && x <= 3);
  take('pcMode', (x) => x === 'PECE' || x === 'PEC');
  if (mode === 'tableau') {
    const s = out.A.length;
    if (out.b.length !== s) out.b = Array.from({ length: s }, (_, i) => out.b[i] ?? '');
    if (out.c.length !== s) out.c = Array.from({ length: s }, (_, i) => out.c[i] ?? '');
  }
  if (mode === 'alphabeta' && out.alpha.length !== out.beta.length) {
    const n = Math.max(out.alpha.length, out.beta.length);
    out.alpha = Array.from({ length: n }, (_, i) => out.alpha[i] ?? '');
    out.beta = Array.from({ length: n }, (_, i) => out.beta[i] ?? '');
  }
  return [out, bad.length ? `could not read ${bad.join(', ')}` : null];
}

// Short human name of what a scheme input is, for legends and headings.
export function schemeTitle(s, describe) {
  if (describe?.label && s.mode === 'catalogue') return describe.label;
  if (s.mode === 'catalogue') return s.name;
  if (s.mode === 'pc') return `${s.predictor}–${s.corrector} ${s.m > 1 ? `P(EC)${s.m}` : 'P(EC)'}${s.pcMode === 'PECE' ? 'E' : ''}`;
  return { rhosigma: 'custom ρ/σ', alphabeta: 'custom α/β', tableau: 'custom tableau', stability: 'custom R(z)' }[s.mode];
}

export function shortName(s, describe) {
  if (s.mode === 'catalogue') return (describe?.name || s.name).toUpperCase();
  if (s.mode === 'pc') return `${s.predictor}-${s.corrector}`.toUpperCase();
  return schemeTitle(s, describe);
}
