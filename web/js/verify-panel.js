// Verification: step the linear system at the current h and plot ||u_n|| / ||u_0|| (log y).

import { el, fmt } from './format.js';
import { STYLES, verifyTraces } from './traces.js';
import { activeSlots } from './controller.js';
import { shortName } from './scheme-spec.js';
import { renderFieldError } from './field-error.js';

export function mountVerifyPanel(root, { store, controller }) {
  root.classList.add('verify-panel', 'panel');
  const steps = el('input', { class: 'input input--narrow input--mono', type: 'number', min: 1, max: 100000, value: 200, 'data-field': 'steps', 'aria-label': 'steps' });
  const run = el('button', { type: 'button', class: 'button button--primary', 'data-role': 'run-verify', text: 'Step at this h',
    onclick: () => {
      const n = Number(steps.value);
      if (!Number.isInteger(n) || n < 1) { renderFieldError(err, { field: 'steps', message: 'must be a whole number of steps, at least 1' }); return; }
      controller.runVerify(n);
    } });
  const err = el('div', { class: 'field-error', hidden: true, role: 'alert', 'data-error-for': 'verify' });
  const fig = el('div', { class: 'verify-panel__figure', 'data-role': 'verify-figure', hidden: true });
  const verdicts = el('div', { class: 'verify-panel__verdicts', 'data-role': 'verify-verdicts' });
  const what = el('p', { class: 'hint', 'data-role': 'verify-what' });
  root.append(
    el('div', { class: 'panel__head' }, el('h2', { class: 'panel__title', text: 'Check by stepping' })),
    el('p', { class: 'hint', text: 'Runs the scheme on u′ = J u at the current h from a random start and plots the norm. Growth where the read-out says stable points at non-normal transients or at a scheme you typed wrongly.' }),
    el('div', { class: 'verify-panel__row' }, el('label', { class: 'field field--inline' }, el('span', { class: 'field__label', text: 'steps' }), steps), run, what),
    err, verdicts, fig);

  function render() {
    const state = store.get();
    run.disabled = !!state.verifyBusy || !state.spectrum || !state.h;
    run.textContent = state.verifyBusy ? 'Stepping…' : 'Step at this h';
    what.textContent = state.jobId ? 'steps the uploaded matrix' : 'steps the diagonal system of the eigenvalues';
    renderFieldError(err, state.verifyError || null);
    const res = state.verifyResult;
    if (!res) { fig.hidden = true; verdicts.replaceChildren(); return; }
    const items = res.results.map(({ slot, result }) => ({ style: STYLES[slot], name: shortName(state[slot === 'a' ? 'schemeA' : 'schemeB'], state[slot === 'a' ? 'analysisA' : 'analysisB']?.describe), result }));
    verdicts.replaceChildren(...items.map((it) => el('div', { class: `verdict verdict--${it.style.key}`, 'data-slot': it.style.key },
      el('strong', { text: `${it.style.tag} · ${it.name}: ` }), el('span', { 'data-role': 'verify-verdict', text: it.result.verdict }),
      el('span', { class: 'hint', text: ` · observed growth per step ${fmt(it.result.observed_growth_per_step, 6)}, predicted ${fmt(it.result.predicted_growth, 6)}, largest ‖uₙ‖/‖u₀‖ ${fmt(it.result.max_transient, 4)}` }),
      ...(it.result.notes || []).map((n) => el('div', { class: 'hint', text: n })))));
    fig.hidden = false;
    window.Plotly.react(fig, verifyTraces(items), {
      margin: { l: 60, r: 16, t: 10, b: 44 }, height: 260, paper_bgcolor: '#fff', plot_bgcolor: '#fcfbf8',
      xaxis: { title: { text: `step n (h = ${fmt(res.h, 6)})` }, gridcolor: '#ebe6db', zeroline: false },
      yaxis: { title: { text: '‖uₙ‖ / ‖u₀‖' }, type: 'log', gridcolor: '#ebe6db', exponentformat: 'power' },
      legend: { orientation: 'h', y: 1.12 }, font: { family: 'system-ui, sans-serif', size: 12 },
    }, { responsive: true, displaylogo: false, showSendToCloud: false });
  }
  store.subscribe((state, changed) => {
    if (['verifyResult', 'verifyBusy', 'verifyError', 'spectrum', 'h', 'jobId'].some((k) => changed.has(k))) render();
  });
  render();
}
