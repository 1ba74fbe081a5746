// Accuracy beside stability: the tolerance (per step or per unit time), the amplitude and phase
// error along the imaginary axis, each scheme's stability- and accuracy-limited step with the
// server's verdict, the work comparison and the cautions. All numbers come from /api/accuracy.

import { el, fmt } from './format.js';
import { accuracyFigure, largestImag, STYLES, UIREVISION } from './traces.js';
import { activeSlots } from './controller.js';
import { shortName } from './scheme-spec.js';
import { renderFieldError } from './field-error.js';

const CONFIG = { responsive: true, displaylogo: false, showSendToCloud: false, showEditInChartStudio: false,
  modeBarButtonsToRemove: ['select2d', 'lasso2d', 'toImage', 'sendChartToCloud'] };
const PERS = [['step', 'per step'], ['unit-time', 'per unit time']];
const TOL_PROBLEM = 'must be a number between 0 and 1, e.g. 1e-6';

// 1e-6 rather than 0.000001; the shortest text that reads back as the same number
const tolText = (x) => (x < 1e-3 ? x.toExponential() : String(x));
const hText = (lim) => (lim?.unbounded ? 'unbounded' : fmt(lim?.h_max, 6));

export const ACCURACY_ROWS = [
  ['stability-limited h', (r) => hText(r.stability_limit), 'h-stability'],
  ['accuracy-limited h', (r) => hText(r.accuracy_limit), 'h-accuracy'],
  ['which binds', (r) => r.verdict, 'verdict'],
  ['stiffness ratio', (r) => (r.stiffness_ratio === null ? '— (no decaying mode)' : fmt(r.stiffness_ratio, 4)), 'stiffness'],
  ['at this h', (r) => {
    const at = r.at_h;
    const worst = at.max_relative_error === null ? 'undetermined' : fmt(at.max_relative_error, 3);
    const within = at.max_relative_error === null ? '' : at.meets_tolerance ? ', within tol' : ', above tol';
    const where = r.h_source === 'given' ? '' : ` (${r.h_source}; no step h set)`;
    return `h = ${fmt(r.h, 6)}${where}: ${at.stable ? 'stable' : 'not stable'}, largest one-step error ${worst} (${r.per === 'step' ? 'tol' : 'tol·h'} ${fmt(at.tolerance, 3)}${within})`;
  }, 'at-h'],
];

export function mountAccuracyPanel(root, { store }) {
  root.classList.add('accuracy-panel', 'panel');
  const tolErr = el('div', { class: 'field-error', hidden: true, role: 'alert', 'data-error-for': 'tol' });
  const tolIn = el('input', { class: 'input input--mono accuracy-panel__tol', type: 'text', inputmode: 'decimal', spellcheck: 'false',
    'data-field': 'tol', 'aria-label': 'accuracy tolerance',
    oninput: () => {
      const raw = tolIn.value.trim();
      const v = Number(raw);
      const good = raw !== '' && Number.isFinite(v) && v > 0 && v < 1;
      localError = good ? null : { field: 'tol', message: TOL_PROBLEM };
      showTolError();
      if (good) store.set({ tol: v });
    } });
  let localError = null;
  const perBtns = el('div', { class: 'segmented', 'data-role': 'per-toggle' },
    ...PERS.map(([per, text]) => el('button', { type: 'button', class: 'segmented__item', 'data-per': per, text, onclick: () => store.set({ per }) })));
  const status = el('span', { class: 'hint accuracy-panel__status', 'data-role': 'accuracy-status' });
  const fig = el('div', { class: 'accuracy-panel__figure', 'data-role': 'accuracy-figure' });
  const markerNote = el('p', { class: 'hint', 'data-role': 'marker-note' });
  const table = el('table', { class: 'accuracy-panel__table', 'data-role': 'accuracy-table' });
  const notes = el('ul', { class: 'notes', 'data-role': 'accuracy-notes' });
  const comparison = el('p', { class: 'accuracy-panel__comparison', 'data-role': 'comparison', hidden: true });
  const generalErr = el('div', { class: 'field-error', hidden: true, role: 'alert', 'data-error-for': 'accuracy' });
  const cautions = el('ul', { class: 'accuracy-panel__cautions', 'data-role': 'accuracy-cautions' });
  const staleNote = el('div', { class: 'stale-note', hidden: true, text: 'These figures are for the last input that could be computed.' });
  const body = el('div', { class: 'accuracy-panel__body' },
    el('div', { class: 'accuracy-panel__plot' }, fig, markerNote),
    el('div', { class: 'accuracy-panel__facts' }, staleNote, el('div', { class: 'property-table__wrap' }, table), notes, comparison));
  root.append(
    el('div', { class: 'panel__head' }, el('h2', { class: 'panel__title', text: 'Accuracy beside stability' }), status),
    el('p', { class: 'hint', text: 'A stable step is not an accurate one. Here: the error of one step on u′ = λu, mode by mode (amplitude and phase of the scheme’s principal root against e^(hλ)), and the largest step that keeps it within a tolerance.' }),
    el('div', { class: 'accuracy-panel__row' },
      el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'tolerance' }), tolIn),
      el('div', { class: 'field' }, el('span', { class: 'field__label', text: 'measured' }), perBtns),
      el('p', { class: 'hint accuracy-panel__per-note', 'data-role': 'per-note' })),
    tolErr, generalErr,
    body,
    el('div', { class: 'accuracy-panel__caution-box' },
      el('div', { class: 'panel__head' }, el('span', { class: 'cautions-panel__icon', 'aria-hidden': 'true', text: '!' }),
        el('h3', { class: 'panel__title', text: 'What this accuracy does and does not say' })),
      cautions));

  function showTolError() {
    const server = store.get().accuracyError;
    renderFieldError(tolErr, localError || (server?.field === 'tol' ? server : null), tolIn.value);
    tolIn.classList.toggle('is-invalid', !tolErr.hidden);
    renderFieldError(generalErr, server && server.field !== 'tol' ? server : null);
  }

  function showControls() {
    const state = store.get();
    if (document.activeElement !== tolIn && !localError) tolIn.value = tolText(state.tol);
    for (const b of perBtns.querySelectorAll('button')) b.classList.toggle('is-active', b.dataset.per === state.per);
    root.querySelector('[data-role=per-note]').textContent = state.per === 'step'
      ? 'tol bounds the relative error of each step (at most 0.5)'
      : 'tol bounds the error per step divided by h: a rate per unit time';
  }

  function items(state) {
    return activeSlots(state).map((s) => ({
      s, style: STYLES[s], report: state[s === 'a' ? 'accuracyA' : 'accuracyB'],
      name: shortName(state[s === 'a' ? 'schemeA' : 'schemeB'], state[s === 'a' ? 'analysisA' : 'analysisB']?.describe),
    })).filter((it) => it.report);
  }

  function render() {
    const state = store.get();
    const list = items(state);
    status.textContent = state.accuracyBusy ? 'computing…' : '';
    root.classList.toggle('is-busy', !!state.accuracyBusy);
    showTolError();
    const stale = !!state.accuracyError && list.length > 0;
    staleNote.hidden = !stale;
    body.classList.toggle('is-stale', stale);
    if (!list.length) {
      table.replaceChildren(el('tbody', {}, el('tr', {}, el('td', { class: 'hint', text: state.spectrum ? 'computing…' : 'no spectrum yet' }))));
      return;
    }
    const h = list[0].report.h;
    const marker = h * largestImag(state.spectrum?.values);
    markerNote.textContent = marker > 0
      ? `Dotted line: h · max|Im λ| = ${fmt(marker, 4)}, the fastest oscillation of this spectrum at h = ${fmt(h, 6)}.`
      : `This spectrum has no imaginary parts, so the dotted line sits at h · max|Im λ| = 0; its modes lie on the real axis, where the table’s numbers apply.`;
    if (window.Plotly) {
      const figure = accuracyFigure({ items: list.map((it) => ({ style: it.style, name: it.name, axis: it.report.imaginary_axis })), marker, uirevision: `${UIREVISION}-accuracy` });
      window.Plotly.react(fig, figure.data, figure.layout, CONFIG).then(() => { fig.dataset.drawn = String(Number(fig.dataset.drawn || 0) + 1); });
    }
    const head = el('tr', {}, el('th', {}), ...list.map((it) => el('th', { class: `col--${it.s}` },
      el('span', { class: 'swatch', style: `--swatch:${it.style.swatch};--swatch-line:${it.style.line}` }), ` ${it.style.tag} · ${it.name}`)));
    const rows = ACCURACY_ROWS.map(([label, f, role]) => el('tr', { 'data-row': role }, el('th', { text: label }),
      ...list.map((it) => el('td', { class: `col--${it.s}${role === 'verdict' ? ' is-text' : ''}`, 'data-slot': it.s, text: f(it.report),
        'data-value': role === 'h-accuracy' ? String(it.report.accuracy_limit.h_max) : role === 'h-stability' ? String(it.report.stability_limit.h_max) : null }))));
    table.replaceChildren(el('thead', {}, head), el('tbody', {}, ...rows));
    const comp = list[0].report.comparison;
    comparison.hidden = !comp;
    comparison.textContent = comp ? `Work at equal accuracy: ${comp.text}. Counted in f-evaluations only; an implicit scheme’s solves are not counted.` : '';
    const unique = (key) => [...new Set(list.flatMap((it) => it.report[key]))];
    notes.replaceChildren(...list.flatMap((it) => it.report.messages.map((t) => el('li', { text: `${it.style.tag}: ${t}` }))));
    cautions.replaceChildren(...unique('cautions').map((t) => el('li', { text: t })));
  }

  store.subscribe((state, changed) => {
    if (changed.has('tol') || changed.has('per')) showControls();
    if (['accuracyA', 'accuracyB', 'accuracyError', 'accuracyBusy', 'compare', 'spectrum'].some((k) => changed.has(k))) render();
  });
  showControls();
  render();
}
