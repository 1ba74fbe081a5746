// Spectrum input: paste numbers, upload a list or a matrix (with job progress and cancel), or
// generate a standard semi-discretisation from the server's model list. Shows count, extremes
// and notes of what the server read.

import { el, fmt, fmtComplex, plural } from './format.js';
import { renderFieldError } from './field-error.js';

const TABS = [
  { key: 'model', label: 'Generate' },
  { key: 'text', label: 'Paste' },
  { key: 'file', label: 'File' },
];

// the extremes worth a glance, in the order a practitioner reads them
const EXTREMES = [
  ['min_real', 'most negative Re λ'], ['max_real', 'largest Re λ'], ['max_abs_imag', 'largest |Im λ|'],
  ['max_modulus', 'largest |λ|'], ['largest_modulus', 'λ of largest modulus'],
];

function label(key) {
  return key.replace(/_/g, ' ');
}

export function mountSpectrumPanel(root, { store, controller }) {
  root.classList.add('spectrum-panel', 'panel');
  const cur = () => store.get().spectrumInput;
  const edit = (patch) => store.set({ spectrumInput: { ...cur(), ...patch } });

  const tabs = el('div', { class: 'tabs', role: 'tablist' });
  const tabBtn = {};
  for (const t of TABS) {
    tabBtn[t.key] = el('button', { type: 'button', class: 'tabs__tab', role: 'tab', 'data-mode': t.key, text: t.label,
      onclick: () => { if (cur().mode !== t.key) { edit({ mode: t.key }); show(); if (t.key !== 'file') controller.spectrumFromInput(0); } } });
    tabs.append(tabBtn[t.key]);
  }

  // generate
  const kindSel = el('select', { class: 'input', 'data-field': 'kind', 'aria-label': 'model', onchange: () => {
    const m = modelOf(kindSel.value);
    const params = Object.fromEntries((m?.params || []).map((p) => [p.name, p.default]));
    edit({ model: { kind: kindSel.value, n: cur().model.n || m?.n_default || 50, params } });
    renderParams();
    controller.spectrumFromInput(0);
  } });
  const nIn = el('input', { class: 'input input--narrow', type: 'number', min: 1, step: 1, 'data-field': 'n', 'aria-label': 'unknowns n',
    oninput: () => { edit({ model: { ...cur().model, n: Number(nIn.value) } }); controller.spectrumFromInput(); } });
  const modelDesc = el('p', { class: 'hint', 'data-role': 'model-description' });
  const paramBox = el('div', { class: 'param-grid' });
  const modelErr = el('div', { class: 'field-error', hidden: true, role: 'alert', 'data-error-for': 'model' });
  const panelModel = el('div', { class: 'spectrum-panel__pane', 'data-pane': 'model' },
    el('div', { class: 'field-row' },
      el('label', { class: 'field field--grow' }, el('span', { class: 'field__label', text: 'semi-discretisation' }), kindSel),
      el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'unknowns n' }), nIn)),
    modelDesc, paramBox, modelErr);

  // paste
  const textArea = el('textarea', { class: 'input input--mono spectrum-panel__text', rows: 5, spellcheck: 'false', 'data-field': 'text',
    placeholder: 'one eigenvalue per line or comma separated:\n-1\n-2.5 + 3i\n(-4, -1)', 'aria-label': 'eigenvalues as text',
    oninput: () => { edit({ text: textArea.value }); controller.spectrumFromInput(); } });
  const textErr = el('div', { class: 'field-error', hidden: true, role: 'alert', 'data-error-for': 'text' });
  const panelText = el('div', { class: 'spectrum-panel__pane', 'data-pane': 'text' }, textArea, textErr);

  // file
  const kindList = el('input', { type: 'radio', name: 'upload-kind', value: 'list', checked: true });
  const kindMatrix = el('input', { type: 'radio', name: 'upload-kind', value: 'matrix' });
  const fileIn = el('input', { type: 'file', class: 'file-input', 'data-field': 'file', 'aria-label': 'spectrum or matrix file',
    accept: '.txt,.csv,.dat,.npy,.npz,.mtx,.mm', onchange: () => {
      const f = fileIn.files?.[0];
      if (!f) return;
      const kind = kindMatrix.checked ? 'matrix' : 'list';
      edit({ file: { name: f.name, kind } });
      controller.uploadFile(f, kind);
      fileIn.value = '';
    } });
  const fileName = el('p', { class: 'hint', 'data-role': 'file-name' });
  const jobBox = el('div', { class: 'job', hidden: true, 'data-role': 'job' });
  const fileErr = el('div', { class: 'field-error', hidden: true, role: 'alert', 'data-error-for': 'file' });
  const panelFile = el('div', { class: 'spectrum-panel__pane', 'data-pane': 'file' },
    el('div', { class: 'radio-row' },
      el('label', {}, kindList, ' eigenvalue list'), el('label', {}, kindMatrix, ' matrix (its eigenvalues are computed)')),
    el('label', { class: 'file-drop' }, fileIn, el('span', { text: 'Choose a file — text, CSV, NPY; MatrixMarket (.mtx) for matrices' })),
    fileName, jobBox, fileErr);

  const summary = el('div', { class: 'spectrum-panel__summary', 'data-role': 'spectrum-summary' });
  const demo = el('p', { class: 'demo-note', hidden: true, 'data-role': 'demo-note' });
  root.append(
    el('div', { class: 'panel__head' }, el('span', { class: 'swatch swatch--points' }), el('h2', { class: 'panel__title', text: 'Eigenvalues λ' })),
    demo, tabs, panelModel, panelText, panelFile, summary);

  const panes = { model: panelModel, text: panelText, file: panelFile };

  function modelOf(kind) {
    return (store.get().models || []).find((m) => m.kind === kind);
  }

  function renderModels() {
    const models = store.get().models || [];
    const kind = cur().model.kind;
    kindSel.replaceChildren(...models.map((m) => el('option', { value: m.kind, text: m.kind.replace(/[-_]/g, ' ') })));
    if (!models.some((m) => m.kind === kind)) kindSel.append(el('option', { value: kind, text: kind }));
    kindSel.value = kind;
    renderParams();
  }

  function renderParams() {
    const m = modelOf(cur().model.kind);
    modelDesc.textContent = m?.description || '';
    const params = cur().model.params || {};
    paramBox.replaceChildren(...(m?.params || []).map((p) => {
      const value = params[p.name] ?? p.default;
      const isNum = typeof p.default === 'number';
      const input = p.choices?.length
        ? el('select', { class: 'input', 'data-field': `params.${p.name}`, 'aria-label': p.name,
          onchange: (e) => { edit({ model: { ...cur().model, params: { ...cur().model.params, [p.name]: e.target.value } } }); controller.spectrumFromInput(0); } },
        ...p.choices.map((c) => el('option', { value: c, text: c, selected: c === value })))
        : isNum || typeof p.default === 'string'
        ? el('input', { class: 'input input--mono', type: 'text', value: value ?? '', 'data-field': `params.${p.name}`, 'aria-label': p.name,
          oninput: (e) => {
            const raw = e.target.value.trim();
            const num = Number(raw);
            const v = isNum && raw !== '' && Number.isFinite(num) ? num : raw;
            edit({ model: { ...cur().model, params: { ...cur().model.params, [p.name]: v } } });
            controller.spectrumFromInput();
          } })
        : el('input', { type: 'checkbox', checked: !!value, 'data-field': `params.${p.name}`, 'aria-label': p.name,
          onchange: (e) => { edit({ model: { ...cur().model, params: { ...cur().model.params, [p.name]: e.target.checked } } }); controller.spectrumFromInput(0); } });
      return el('label', { class: 'field', title: p.description || '' }, el('span', { class: 'field__label', text: label(p.name) }), input);
    }));
  }

  function show() {
    const mode = cur().mode;
    for (const [k, p] of Object.entries(panes)) p.hidden = k !== mode;
    for (const [k, b] of Object.entries(tabBtn)) { b.classList.toggle('is-active', k === mode); b.setAttribute('aria-selected', String(k === mode)); }
  }

  function load() {
    const inp = cur();
    textArea.value = inp.text;
    nIn.value = inp.model.n;
    renderModels();
    fileName.textContent = inp.file ? `${inp.file.restored ? 'restored from the link: ' : ''}${inp.file.name}` : '';
    show();
  }

  function showErrors() {
    const info = store.get().spectrumError;
    const mode = cur().mode;
    renderFieldError(textErr, mode === 'text' ? info : null, null);
    renderFieldError(modelErr, mode === 'model' ? info : null, null);
    renderFieldError(fileErr, mode === 'file' ? info : null, null);
    textArea.classList.toggle('is-invalid', !!info && mode === 'text');
  }

  function showJob() {
    const j = store.get().job;
    jobBox.hidden = !j;
    if (!j) return;
    const running = !['done', 'failed', 'cancelled', 'timed-out'].includes(j.state);
    jobBox.replaceChildren(
      el('div', { class: 'job__row' },
        el('span', { class: `job__state job__state--${j.state}`, 'data-role': 'job-state', text: j.state }),
        el('span', { class: 'job__message', text: j.message }),
        running ? el('button', { type: 'button', class: 'button button--small', 'data-role': 'job-cancel', text: 'Cancel', onclick: () => controller.cancelJob() }) : null),
      el('div', { class: `progress${running ? ' progress--running' : ''}`, role: 'progressbar', 'aria-valuemin': 0, 'aria-valuemax': 1, 'aria-valuenow': j.progress },
        el('span', { class: 'progress__bar', style: `width:${Math.round(100 * j.progress)}%` })),
      el('div', { class: 'hint', text: `${j.filename} · ${fmt(j.elapsed_seconds, 3)} s of at most ${j.time_limit_seconds} s · progress is by stage (a dense eigenvalue solve reports no finer steps)` }),
    );
  }

  function showSummary() {
    const sp = store.get().spectrum;
    summary.replaceChildren();
    if (!sp) return;
    const rows = [el('div', { class: 'stat' }, el('span', { class: 'stat__label', text: 'count' }), el('span', { class: 'stat__value', 'data-role': 'spectrum-count', text: String(sp.count) }))];
    const ex = sp.extremes || {};
    for (const [k, name] of EXTREMES) {
      const v = ex[k];
      if (v === null || v === undefined) continue;
      const text = Array.isArray(v) ? fmtComplex(v, 6) : fmt(v, 6);
      rows.push(el('div', { class: 'stat' }, el('span', { class: 'stat__label', text: name }), el('span', { class: 'stat__value stat__value--mono', 'data-extreme': k, text })));
    }
    summary.append(el('div', { class: 'stat-grid' }, ...rows));
    const notes = [...(sp.notes || [])];
    if (sp.partial) notes.unshift('partial spectrum: only some eigenvalues were computed');
    if (sp.source) summary.append(el('p', { class: 'hint', 'data-role': 'spectrum-source', text: `source: ${sp.source}` }));
    if (notes.length) summary.append(el('ul', { class: 'notes' }, ...notes.map((n) => el('li', { text: n }))));
  }

  function showDemo() {
    const d = store.get().demo;
    demo.hidden = !d;
    demo.textContent = d || '';
  }

  store.subscribe((state, changed) => {
    if (changed.has('models')) renderModels();
    if (changed.has('spectrumError') || changed.has('spectrumInput')) showErrors();
    if (changed.has('job')) showJob();
    if (changed.has('spectrum')) showSummary();
    if (changed.has('demo')) showDemo();
    if (changed.has('spectrumInput')) fileName.textContent = cur().file ? `${cur().file.restored ? 'restored from the link: ' : ''}${cur().file.name}` : '';
  });
  load();
  showDemo();
  return { load };
}
