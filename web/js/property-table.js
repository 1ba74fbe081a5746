// Property table: both schemes' properties side by side, with this spectrum's limits.

import { el, fmt, fmtComplex, fmtDegrees, fmtInterval } from './format.js';
import { STYLES } from './traces.js';
import { activeSlots } from './controller.js';
import { shortName } from './scheme-spec.js';

const yes = (v) => (v === null || v === undefined ? '—' : v ? 'yes' : 'no');

export const ROWS = [
  ['kind', (d) => `${d.kind}${d.family && d.family !== 'custom' ? ` (${d.family})` : ''}`, 'kind'],
  ['steps · stages', (d) => `${d.steps} · ${d.stages}`, 'shape'],
  ['explicit', (d) => yes(d.explicit), 'explicit'],
  ['order', (d) => String(d.order), 'order'],
  ['error constant', (d) => (d.error_constant ? `${d.error_constant}${d.error_constant_value !== null ? ` ≈ ${fmt(d.error_constant_value, 5)}` : ''}` : '—'), 'error-constant'],
  ['normalised error constant', (d) => d.error_constant_normalised ?? '—', 'error-constant-normalised'],
  ['root condition', (d) => d.root_condition, 'root-condition'],
  ['real interval', (d) => fmtInterval(d.real_interval, 7), 'real-interval'],
  ['imaginary interval', (d) => fmtInterval(d.imag_interval, 7), 'imag-interval'],
  ['A-stable', (d) => yes(d.a_stable), 'a-stable'],
  ['A(α) angle', (d) => (d.a_stable ? '90° (A-stable)' : fmtDegrees(d.a_alpha_deg)), 'a-alpha'],
  ['L-stable', (d) => yes(d.l_stable), 'l-stable'],
  ['f-evaluations per step', (d) => String(d.evaluations_per_step), 'evaluations'],
];

export const LIMIT_ROWS = [
  ['h_max (this spectrum)', (l) => (l.unbounded ? 'unbounded' : fmt(l.h_max, 7)), 'h-max'],
  ['h_max per f-evaluation', (l) => (l.unbounded ? 'unbounded' : l.h_max_per_evaluation === null ? '—' : fmt(l.h_max_per_evaluation, 7)), 'h-max-per-evaluation'],
  ['binding eigenvalue', (l) => fmtComplex(l.binding_eigenvalue, 6), 'binding'],
];

export function mountPropertyTable(root, { store }) {
  root.classList.add('property-table', 'panel');
  const table = el('table', { class: 'property-table__table' });
  const note = el('p', { class: 'hint', 'data-role': 'implicit-note', hidden: true,
    text: 'Per f-evaluation counts right-hand-side evaluations only: an implicit scheme also solves a (non)linear system every step, which is not counted here.' });
  root.append(el('div', { class: 'panel__head' }, el('h2', { class: 'panel__title', text: 'Properties' })), el('div', { class: 'property-table__wrap' }, table), note);

  function render() {
    const state = store.get();
    const slots = activeSlots(state);
    const cols = slots.map((s) => ({
      s, d: state[s === 'a' ? 'analysisA' : 'analysisB']?.describe, l: state[s === 'a' ? 'limitA' : 'limitB'],
      pending: state[s === 'a' ? 'analysisA' : 'analysisB']?.describeFor !== state[s === 'a' ? 'analysisA' : 'analysisB']?.specKey,
      stale: !!state[s === 'a' ? 'errorA' : 'errorB'],
      name: shortName(state[s === 'a' ? 'schemeA' : 'schemeB'], state[s === 'a' ? 'analysisA' : 'analysisB']?.describe),
    }));
    const head = el('tr', {}, el('th', {}), ...cols.map((c) => el('th', { class: `col--${c.s}` },
      el('span', { class: 'swatch', style: `--swatch:${STYLES[c.s].swatch};--swatch-line:${STYLES[c.s].line}` }), ` ${STYLES[c.s].tag} · ${c.name}`,
      c.stale ? el('div', { class: 'stale-note', text: 'last scheme that could be read' }) : null)));
    const body = [];
    for (const [label, f, role] of ROWS) {
      body.push(el('tr', { 'data-row': role }, el('th', { text: label }), ...cols.map((c) => el('td', { class: `col--${c.s}${c.pending ? ' is-pending' : ''}${c.stale ? ' is-stale' : ''}`, 'data-slot': c.s, 'data-pending': String(c.pending), text: c.d ? f(c.d) : '…' }))));
    }
    // the better per-evaluation limit gets a mark: this is what compares work fairly
    const per = cols.map((c) => c.l?.h_max_per_evaluation ?? (c.l?.unbounded ? Infinity : null));
    const best = cols.length > 1 && per.every((v) => v !== null) && per[0] !== per[1] ? (per[0] > per[1] ? 0 : 1) : -1;
    for (const [label, f, role] of LIMIT_ROWS) {
      body.push(el('tr', { 'data-row': role, class: 'row--limit' }, el('th', { text: label }), ...cols.map((c, i) => el('td', { class: `col--${c.s}${role === 'h-max-per-evaluation' && i === best ? ' is-best' : ''}${c.stale ? ' is-stale' : ''}`, 'data-slot': c.s,
        text: c.l ? f(c.l) : (state.spectrum ? '…' : '—') }))));
    }
    table.replaceChildren(el('thead', {}, head), el('tbody', {}, ...body));
    note.hidden = !cols.some((c) => c.d && c.d.explicit === false);
  }

  store.subscribe((state, changed) => {
    if (['analysisA', 'analysisB', 'limitA', 'limitB', 'compare', 'spectrum', 'errorA', 'errorB'].some((k) => changed.has(k))) render();
  });
  render();
}
