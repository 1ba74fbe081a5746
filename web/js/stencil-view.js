// Stencil view: which time levels of u and f a scheme uses, the unknown level marked, the exact
// coefficients, order and error constant. Drawn from the server's describe(); no arithmetic.

import { el, fmt } from './format.js';

const NS = 'http://www.w3.org/2000/svg';
const COLORS = { known: '#25303b', unknown: '#1f6fb2', implicit: '#c4432b', predicted: '#7a5bb5', empty: '#d8d2c6' };

function svg(tag, attrs = {}, text) {
  const n = document.createElementNS(NS, tag);
  for (const [k, v] of Object.entries(attrs)) n.setAttribute(k, v);
  if (text !== undefined) n.textContent = text;
  return n;
}

let arrowCount = 0;
const isZero = (t) => t === null || t === undefined || /^\s*[-+]?0+(\.0*)?\s*$/.test(String(t));

function sub(j, k) {
  if (j === 0) return 'n';
  return `n+${j}`;
}

// Σ α_j u_{n+j} = h Σ β_j f_{n+j} written out with the exact coefficients.
export function multistepFormula(alpha, beta) {
  const side = (coefs, sym) => {
    const terms = [];
    coefs.forEach((c, j) => {
      if (isZero(c)) return;
      let t = String(c).trim();
      const neg = t.startsWith('-');
      if (neg) t = t.slice(1);
      const mag = t === '1' ? '' : (/[+\-]/.test(t) ? `(${t}) ` : `${t} `);
      terms.push({ neg, text: `${mag}${sym}ₙ${j ? `₊${String(j).replace(/\d/g, (d) => '₀₁₂₃₄₅₆₇₈₉'[d])}` : ''}` });
    });
    return terms.map((t, i) => (i === 0 ? (t.neg ? '−' : '') : (t.neg ? ' − ' : ' + ')) + t.text).join('') || '0';
  };
  return `${side(alpha, 'u')} = h·(${side(beta, 'f')})`;
}

function drawMultistep(alpha, beta, opts = {}) {
  const k = alpha.length - 1;
  const w = 330;
  const left = 44;
  const step = k === 0 ? 0 : Math.min(64, (w - left - 24) / k);
  const x = (j) => left + 12 + j * step;
  const root = svg('svg', { viewBox: `0 0 ${w} 118`, class: 'stencil-view__svg', role: 'img',
    'aria-label': `time levels used: ${k}-step ${opts.explicit ? 'explicit' : 'implicit'}` });
  const markerId = `arr-${++arrowCount}`;
  root.append(svg('rect', { x: x(k) - 17, y: 4, width: 34, height: 92, rx: 8, fill: '#eef4fb' }));
  root.append(svg('text', { x: 8, y: 34, class: 'stencil-view__row' }, 'u'));
  root.append(svg('text', { x: 8, y: 74, class: 'stencil-view__row' }, 'f'));
  root.append(svg('line', { x1: left, y1: 100, x2: x(k) + 24, y2: 100, stroke: '#b9b1a3', 'stroke-width': 1, 'marker-end': `url(#${markerId})` }));
  const defs = svg('defs');
  const marker = svg('marker', { id: markerId, viewBox: '0 0 8 8', refX: 7, refY: 4, markerWidth: 7, markerHeight: 7, orient: 'auto' });
  marker.append(svg('path', { d: 'M0,0 L8,4 L0,8 z', fill: '#b9b1a3' }));
  defs.append(marker);
  root.prepend(defs);
  for (let j = 0; j <= k; j++) {
    const last = j === k;
    root.append(svg('text', { x: x(j), y: 114, 'text-anchor': 'middle', class: 'stencil-view__tick' }, sub(j, k)));
    const ua = !isZero(alpha[j]);
    const fb = !isZero(beta[j]);
    root.append(svg('circle', { cx: x(j), cy: 30, r: 8, fill: ua ? (last ? COLORS.unknown : COLORS.known) : '#fff',
      stroke: ua ? (last ? COLORS.unknown : COLORS.known) : COLORS.empty, 'stroke-width': 1.5, 'data-level': `u${j}`, 'data-used': ua }));
    let fColor = COLORS.known;
    if (last && fb) fColor = opts.predicted ? COLORS.predicted : COLORS.implicit;
    root.append(svg('circle', { cx: x(j), cy: 70, r: 8, fill: fb ? fColor : '#fff', stroke: fb ? fColor : COLORS.empty,
      'stroke-width': 1.5, 'stroke-dasharray': last && fb && opts.predicted ? '3 2' : 'none', 'data-level': `f${j}`, 'data-used': fb }));
    if (k <= 6) {
      root.append(svg('text', { x: x(j), y: 50, 'text-anchor': 'middle', class: 'stencil-view__coef' }, ua ? String(alpha[j]) : ''));
      root.append(svg('text', { x: x(j), y: 90, 'text-anchor': 'middle', class: 'stencil-view__coef' }, fb ? String(beta[j]) : ''));
    }
  }
  return root;
}

function drawOneStep(tableau, opts = {}) {
  const w = 330;
  const x0 = 70;
  const x1 = 290;
  const root = svg('svg', { viewBox: `0 0 ${w} 118`, class: 'stencil-view__svg', role: 'img', 'aria-label': 'one-step scheme: stages inside the step' });
  root.append(svg('rect', { x: x1 - 17, y: 4, width: 34, height: 92, rx: 8, fill: '#eef4fb' }));
  root.append(svg('text', { x: 8, y: 34, class: 'stencil-view__row' }, 'u'));
  root.append(svg('text', { x: 8, y: 74, class: 'stencil-view__row' }, 'f'));
  root.append(svg('line', { x1: x0, y1: 30, x2: x1, y2: 30, stroke: '#cfc8ba', 'stroke-width': 1.2, 'stroke-dasharray': '4 3' }));
  root.append(svg('circle', { cx: x0, cy: 30, r: 8, fill: COLORS.known, 'data-level': 'u0', 'data-used': true }));
  root.append(svg('circle', { cx: x1, cy: 30, r: 8, fill: COLORS.unknown, 'data-level': 'u1', 'data-used': true }));
  root.append(svg('text', { x: x0, y: 114, 'text-anchor': 'middle', class: 'stencil-view__tick' }, 'n'));
  root.append(svg('text', { x: x1, y: 114, 'text-anchor': 'middle', class: 'stencil-view__tick' }, 'n+1'));
  root.append(svg('line', { x1: x0 - 20, y1: 100, x2: x1 + 26, y2: 100, stroke: '#b9b1a3', 'stroke-width': 1 }));
  if (!tableau) {
    root.append(svg('text', { x: (x0 + x1) / 2, y: 22, 'text-anchor': 'middle', class: 'stencil-view__coef' }, opts.rz || 'R(z)'));
    root.append(svg('text', { x: (x0 + x1) / 2, y: 74, 'text-anchor': 'middle', class: 'stencil-view__note' }, 'stages not given (R(z) only)'));
    return root;
  }
  const s = tableau.A.length;
  const seen = new Map();
  tableau.c.forEach((cText, i) => {
    const c = Number(opts.cValues?.[i] ?? NaN);
    const frac = Number.isFinite(c) ? Math.min(Math.max(c, 0), 1) : i / Math.max(s - 1, 1);
    const stack = seen.get(frac.toFixed(4)) || 0;
    seen.set(frac.toFixed(4), stack + 1);
    const implicit = tableau.A[i].some((a, j) => j >= i && !isZero(a));
    const cx = x0 + frac * (x1 - x0);
    const cy = 70 - stack * 9;
    root.append(svg('circle', { cx, cy, r: 6.5, fill: implicit ? COLORS.implicit : COLORS.known, 'fill-opacity': 0.9,
      stroke: '#fff', 'stroke-width': 1.2, 'data-level': `stage${i + 1}`, 'data-used': true, 'data-implicit': implicit }));
    if (stack === 0 && s <= 8) root.append(svg('text', { x: cx, y: 90, 'text-anchor': 'middle', class: 'stencil-view__coef' }, String(cText)));
  });
  return root;
}

function tableauGrid(tab) {
  const rows = tab.A.map((r, i) => el('tr', {}, el('td', { class: 'butcher-view__c', text: tab.c[i] }), ...r.map((a) => el('td', { text: isZero(a) ? '' : a }))));
  rows.push(el('tr', { class: 'butcher-view__b' }, el('td', {}), ...tab.b.map((b) => el('td', { text: b }))));
  return el('table', { class: 'butcher-view' }, el('tbody', {}, ...rows));
}

function legend(items) {
  return el('div', { class: 'stencil-view__legend' }, ...items.map(([c, t, dashed]) => el('span', { class: 'stencil-view__key' },
    el('i', { style: `background:${dashed ? '#fff' : c};border-color:${c}${dashed ? ';border-style:dashed' : ''}` }), t)));
}

export function mountStencilView(root, { store, slot }) {
  const anaKey = slot === 'a' ? 'analysisA' : 'analysisB';
  root.classList.add('stencil-view');
  const draw = () => {
    const a = store.get()[anaKey];
    const d = a?.describe;
    root.replaceChildren();
    if (!d) { root.hidden = true; return; }
    root.hidden = false;
    root.classList.toggle('is-pending', a.describeFor !== a.specKey);
    root.classList.toggle('is-stale', !!store.get()[slot === 'a' ? 'errorA' : 'errorB']);
    const facts = [];
    facts.push(d.explicit ? 'explicit' : 'implicit');
    if (d.kind === 'multistep' || d.kind === 'predictor-corrector') facts.push(`${d.steps}-step`);
    else facts.push(`one-step, ${d.stages} stage${d.stages === 1 ? '' : 's'}`);
    facts.push(`order ${d.order}`);
    facts.push(`${d.evaluations_per_step} f-evaluation${d.evaluations_per_step === 1 ? '' : 's'} per step`);
    let picture;
    let keys;
    let formula = null;
    if (d.kind === 'multistep' && d.alpha && d.beta) {
      picture = drawMultistep(d.alpha, d.beta, { explicit: d.explicit });
      formula = multistepFormula(d.alpha, d.beta);
      keys = [[COLORS.known, 'known level'], [COLORS.unknown, 'new value'], [COLORS.implicit, 'f at the new level: implicit']];
    } else if (d.kind === 'predictor-corrector' && a.stencil?.parts?.length === 2) {
      const [p, c] = a.stencil.parts;
      picture = drawMultistep(c.alpha, c.beta, { predicted: true });
      formula = `P: ${multistepFormula(p.alpha, p.beta)}\nC: ${multistepFormula(c.alpha, c.beta)}`;
      keys = [[COLORS.known, 'known level'], [COLORS.unknown, 'new value'], [COLORS.predicted, 'f at the predicted value (no solve)', true]];
    } else if (d.tableau) {
      picture = drawOneStep(d.tableau, { cValues: a.stencil?.c_values });
      keys = [[COLORS.known, 'explicit stage'], [COLORS.implicit, 'implicit stage'], [COLORS.unknown, 'new value']];
    } else {
      const sf = d.stability_function;
      picture = drawOneStep(null, { rz: sf ? (sf.Q === '1' ? `R = ${sf.P}` : `R = (${sf.P}) / (${sf.Q})`) : 'R(z)' });
      keys = [[COLORS.known, 'known'], [COLORS.unknown, 'new value']];
    }
    const constant = d.error_constant === null || d.error_constant === undefined ? '—'
      : `${d.error_constant}${d.error_constant_value !== null ? ` ≈ ${fmt(d.error_constant_value, 5)}` : ''}`;
    const normalised = d.error_constant_normalised && d.error_constant_normalised !== d.error_constant
      ? el('div', { class: 'stencil-view__const' }, el('span', { text: 'normalised' }), el('code', { text: d.error_constant_normalised })) : null;
    root.append(...[
      el('div', { class: 'stencil-view__facts', 'data-role': 'facts' }, facts.join(' · ')),
      picture,
      legend(keys),
      formula ? el('pre', { class: 'stencil-view__formula', 'data-role': 'formula', text: formula }) : null,
      d.tableau ? tableauGrid(d.tableau) : null,
      el('div', { class: 'stencil-view__const' }, el('span', { text: `error constant (order ${d.order})` }), el('code', { 'data-role': 'error-constant', text: constant })),
      normalised,
      el('div', { class: 'stencil-view__convention', text: d.error_constant_convention || '' }),
    ].filter(Boolean));
  };
  store.subscribe((state, changed) => { if (changed.has(anaKey) || changed.has(slot === 'a' ? 'errorA' : 'errorB')) draw(); });
  draw();
}
