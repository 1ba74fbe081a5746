// Step control: h typed or on a log slider (points move at once, no server call), the safety
// factor, "h = safety x h_max" buttons, and the read-out of each scheme's limit at this h.

import { el, fmt, fmtComplex, plural } from './format.js';
import { countOutside, outsideMask, STYLES } from './traces.js';
import { activeSlots } from './controller.js';
import { shortName } from './scheme-spec.js';

const SLIDER_STEPS = 1000;

// Slider position <-> h on a log scale between lo and hi (pure).
export function sliderToStep(pos, lo, hi) {
  return 10 ** (Math.log10(lo) + (pos / SLIDER_STEPS) * (Math.log10(hi) - Math.log10(lo)));
}
export function stepToSlider(h, lo, hi) {
  const t = (Math.log10(h) - Math.log10(lo)) / (Math.log10(hi) - Math.log10(lo));
  return Math.round(Math.min(1, Math.max(0, t)) * SLIDER_STEPS);
}

function windowsText(windows) {
  if (!windows?.length) return 'none';
  return windows.map(([a, b]) => `${a === 0 ? '(0' : `[${fmt(a, 5)}`}, ${b === null ? '∞)' : `${fmt(b, 5)}]`}`).join(' ∪ ');
}

export function mountStepControl(root, { store, controller }) {
  root.classList.add('step-control', 'panel');
  let range = null;

  // A number field that says what is wrong next to itself and keeps what was typed.
  function numberField(attrs, ok, problem, accept) {
    const err = el('div', { class: 'field-error', hidden: true, role: 'alert', 'data-error-for': attrs['data-field'] });
    const input = el('input', { class: 'input input--mono', type: 'text', inputmode: 'decimal', spellcheck: 'false', ...attrs,
      oninput: () => {
        const raw = input.value.trim();
        const v = Number(raw);
        const good = raw !== '' && Number.isFinite(v) && ok(v);
        err.hidden = good;
        err.textContent = good ? '' : problem;
        input.classList.toggle('is-invalid', !good);
        if (good) accept(v);
      } });
    const clear = () => { err.hidden = true; input.classList.remove('is-invalid'); };
    return { input, err, clear };
  }

  const hField = numberField({ class: 'input input--mono step-control__h', 'data-field': 'h', 'aria-label': 'step h' },
    (v) => v > 0, 'h: must be a positive number such as 0.002 or 2e-3', (h) => store.set({ h }));
  const safetyField = numberField({ class: 'input input--mono input--narrow', 'data-field': 'safety', 'aria-label': 'safety factor' },
    (v) => v > 0 && v <= 1, 'safety: must lie in (0, 1], e.g. 0.9', (safety) => { store.set({ safety }); controller.refreshLimits(150); });
  const hIn = hField.input;
  const hErr = hField.err;
  const safetyIn = safetyField.input;
  const safetyErr = safetyField.err;
  const slider = el('input', { type: 'range', class: 'slider', min: 0, max: SLIDER_STEPS, step: 1, 'data-field': 'h-slider', 'aria-label': 'step h, logarithmic',
    oninput: () => {
      if (!range) return;
      const h = Number(sliderToStep(Number(slider.value), range[0], range[1]).toPrecision(6));
      hIn.value = String(h);
      hField.clear();
      // while dragging only the points move; server work waits for the release (change)
      store.set({ h, hDragging: true });
    },
    onchange: () => store.set({ hDragging: false }) });
  const rangeLo = el('span', { class: 'slider__end' });
  const rangeHi = el('span', { class: 'slider__end' });
  const useButtons = el('div', { class: 'step-control__use' });
  const readouts = el('div', { class: 'readouts' });

  root.append(
    el('div', { class: 'step-control__row' },
      el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'step h' }), hIn),
      el('div', { class: 'field field--grow' }, el('span', { class: 'field__label', text: 'drag to move the points h·λ' }),
        el('div', { class: 'slider-row' }, rangeLo, slider, rangeHi)),
      el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'safety factor' }), safetyIn),
      useButtons),
    hErr, safetyErr, readouts);

  function updateRange(force) {
    const state = store.get();
    const ref = controller.referenceStep(state);
    const h = state.h;
    if (!ref && !h) { range = null; return; }
    const base = ref || h;
    let lo = base / 1000;
    let hi = base * 30;
    if (h && (h < lo || h > hi)) { lo = Math.min(lo, h / 3); hi = Math.max(hi, h * 3); }
    if (force || !range || Math.abs(Math.log10(range[0] / lo)) > 1e-9 || Math.abs(Math.log10(range[1] / hi)) > 1e-9) range = [lo, hi];
    rangeLo.textContent = fmt(range[0], 2);
    rangeHi.textContent = fmt(range[1], 2);
  }

  function showH() {
    const { h } = store.get();
    if (document.activeElement !== hIn && h) hIn.value = String(Number(h.toPrecision(8)));
    if (range && h) slider.value = stepToSlider(h, range[0], range[1]);
  }

  function showButtons() {
    const state = store.get();
    useButtons.replaceChildren(...activeSlots(state).map((s) => {
      const lim = state[s === 'a' ? 'limitA' : 'limitB'];
      const an = state[s === 'a' ? 'analysisA' : 'analysisB'];
      const ok = lim && lim.h_max !== null && lim.h_max > 0;
      return el('button', { type: 'button', class: `button button--${s}`, disabled: !ok, 'data-role': `use-hmax-${s}`,
        title: ok ? `set h = ${state.safety} × h_max of ${shortName(state[s === 'a' ? 'schemeA' : 'schemeB'], an?.describe)}` : 'no finite h_max',
        text: `h = ${state.safety} × h_max ${STYLES[s].tag}`,
        onclick: () => { store.set({ h: state.safety * lim.h_max }); } });
    }));
  }

  function readout(s) {
    const state = store.get();
    const lim = state[s === 'a' ? 'limitA' : 'limitB'];
    const limErr = state[s === 'a' ? 'limitErrorA' : 'limitErrorB'];
    const an = state[s === 'a' ? 'analysisA' : 'analysisB'];
    const name = shortName(state[s === 'a' ? 'schemeA' : 'schemeB'], an?.describe);
    const inputError = state[s === 'a' ? 'errorA' : 'errorB'];
    const card = el('div', { class: `readout readout--${s}`, 'data-slot': s, 'data-stale': String(!!inputError) });
    card.append(el('div', { class: 'readout__head' }, el('span', { class: 'swatch', style: `--swatch:${STYLES[s].swatch};--swatch-line:${STYLES[s].line}` }),
      el('span', { class: 'readout__name', text: `${STYLES[s].tag} · ${name}` })));
    if (inputError && lim) {
      card.append(el('div', { class: 'stale-note', text: 'The scheme’s input has an error: these figures are for the last scheme that could be read.' }));
      card.classList.add('is-stale');
    }
    if (limErr) { card.append(el('div', { class: 'field-error', text: limErr.message || 'could not compute the limit' })); return card; }
    if (!lim) { card.append(el('div', { class: 'readout__wait', text: state.spectrum ? 'computing…' : 'no spectrum yet' })); return card; }
    const hmaxText = lim.unbounded ? 'unbounded' : fmt(lim.h_max, 7);
    card.append(el('div', { class: 'readout__big' },
      el('span', { class: 'readout__label', text: 'h_max' }),
      el('span', { class: 'readout__value', 'data-role': 'h-max', 'data-value': lim.h_max === null ? 'unbounded' : String(lim.h_max), title: lim.h_max === null ? '' : String(lim.h_max), text: hmaxText })));
    const rows = [
      ['binding λ', lim.binding_eigenvalue ? `${fmtComplex(lim.binding_eigenvalue, 6)}  (#${lim.binding_index})` : '—', 'binding'],
      ['per f-evaluation', lim.h_max_per_evaluation === null ? '—' : `${fmt(lim.h_max_per_evaluation, 6)}  (${plural(lim.evaluations_per_step, 'evaluation')}/step)`, 'per-eval'],
      ['stable steps', windowsText(lim.windows), 'windows'],
    ];
    if (lim.h_safe !== null && lim.h_safe !== undefined) rows.splice(1, 0, [`${lim.safety} × h_max`, fmt(lim.h_safe, 7), 'h-safe']);
    card.append(el('dl', { class: 'readout__rows' }, ...rows.flatMap(([k, v, role]) => [el('dt', { text: k }), el('dd', { 'data-role': role, text: v })])));
    const h = state.h;
    if (h && state.spectrum) {
      const mask = outsideMask(lim.per_eigenvalue, h);
      const n = countOutside(mask);
      const ratio = lim.h_max ? h / lim.h_max : null;
      const verdict = !lim.zero_stable ? { cls: 'bad', text: 'fails the root condition: no step is stable' }
        : n === 0 ? { cls: 'ok', text: `all ${state.spectrum.count} h·λ inside${ratio ? ` · h = ${fmt(ratio, 3)} × h_max` : ''} · linear test only, see the cautions` }
          : { cls: 'bad', text: `${n} of ${state.spectrum.count} h·λ outside${ratio ? ` · h = ${fmt(ratio, 3)} × h_max` : ''}` };
      card.append(el('div', { class: `readout__verdict readout__verdict--${verdict.cls}`, 'data-role': 'verdict', 'data-outside': n, text: verdict.text }));
    }
    return card;
  }

  function showReadouts() {
    const state = store.get();
    readouts.replaceChildren(...activeSlots(state).map(readout));
  }

  store.subscribe((state, changed) => {
    const limitsChanged = changed.has('limitA') || changed.has('limitB') || changed.has('compare') || changed.has('spectrum');
    if (limitsChanged) updateRange(false);
    if (changed.has('h') || limitsChanged) { if (changed.has('h') && range && state.h && (state.h < range[0] || state.h > range[1])) updateRange(true); showH(); }
    if (changed.has('safety') && document.activeElement !== safetyIn) safetyIn.value = String(state.safety);
    if (limitsChanged || changed.has('safety') || changed.has('analysisA') || changed.has('analysisB')) showButtons();
    if (limitsChanged || ['h', 'analysisA', 'analysisB', 'limitErrorA', 'limitErrorB', 'errorA', 'errorB'].some((k) => changed.has(k))) showReadouts();
  });
  safetyIn.value = String(store.get().safety);
  updateRange(true);
  showH();
  showButtons();
  showReadouts();
}
