// Scheme editor: catalogue pick or custom input (rho/sigma, alpha/beta, Butcher tableau, R(z),
// predictor-corrector pair). Typing updates the store; the store never writes back into a field
// except when a whole configuration is loaded, so an error can never wipe what was typed.

import { el, fmt } from './format.js';
import { MODES, schemeTitle } from './scheme-spec.js';
import { entryIndex, fieldKey, renderFieldError, tableauCell } from './field-error.js';
import { STYLES } from './traces.js';

const MAX_K = 12;
const MAX_S = 8;

function catalogueOption(entry) {
  const order = entry.order === null || entry.order === undefined ? 'order …' : `order ${entry.order}`;
  const shape = entry.kind === 'multistep' || entry.kind === 'predictor-corrector'
    ? `${entry.steps} step${entry.steps === 1 ? '' : 's'}`
    : `${entry.stages} stage${entry.stages === 1 ? '' : 's'}`;
  return `${entry.label.replace(/\s*\(.*\)$/, '')} — ${order} · ${shape} · ${entry.explicit ? 'explicit' : 'implicit'}`;
}

export function mountSchemeEditor(root, { slot, store, onEdit }) {
  const style = STYLES[slot];
  const key = slot === 'a' ? 'schemeA' : 'schemeB';
  const errKey = slot === 'a' ? 'errorA' : 'errorB';
  const anaKey = slot === 'a' ? 'analysisA' : 'analysisB';
  root.classList.add('scheme-editor', `scheme-editor--${slot}`);
  root.dataset.slot = slot;

  const cur = () => store.get()[key];
  const edit = (patch, source) => {
    store.set({ [key]: { ...cur(), ...patch } });
    onEdit(slot, source);
  };

  // header
  const title = el('span', { class: 'scheme-editor__title', 'data-role': 'title' });
  const toggle = slot === 'b'
    ? el('label', { class: 'switch' }, el('input', { type: 'checkbox', 'data-role': 'compare-toggle' }), el('span', { class: 'switch__track' }), el('span', { class: 'switch__label', text: 'compare' }))
    : null;
  const header = el('div', { class: 'panel__head' },
    el('span', { class: 'swatch', style: `--swatch:${style.swatch};--swatch-line:${style.line}` }),
    el('h2', { class: 'panel__title' }, `Scheme ${style.tag}`), title, toggle);

  // tabs
  const tabs = el('div', { class: 'tabs', role: 'tablist' });
  const tabButtons = {};
  for (const m of MODES) {
    const b = el('button', { type: 'button', class: 'tabs__tab', role: 'tab', 'data-mode': m.key, text: m.label,
      onclick: () => {
        if (cur().mode === m.key) return;
        const fill = emptyMode(m.key) ? prefillFor(m.key) : null;
        edit({ mode: m.key, ...(fill || {}) }, 'mode');
        if (fill) load(); else showMode();
      } });
    tabButtons[m.key] = b;
    tabs.append(b);
  }

  const panels = {};
  const errBoxes = {};
  const errorBox = (k) => (errBoxes[k] = el('div', { class: 'field-error', hidden: true, role: 'alert', 'data-error-for': k }));

  // catalogue
  const select = el('select', { class: 'input', 'data-field': 'name', 'aria-label': `catalogue scheme ${style.tag}`,
    onchange: () => edit({ name: select.value }, 'name') });
  const pickInfo = el('p', { class: 'hint', 'data-role': 'pick-info' });
  panels.catalogue = el('div', { class: 'scheme-editor__panel' },
    el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'Scheme' }), select), pickInfo, errorBox('general-catalogue'));

  // rho / sigma
  const textField = (name, label, placeholder, hint) => {
    const input = el('input', { class: 'input input--mono', type: 'text', spellcheck: 'false', autocomplete: 'off',
      'data-field': name, placeholder, 'aria-label': `${label} of scheme ${style.tag}`,
      oninput: () => edit({ [name]: input.value }, name) });
    return [input, el('label', { class: 'field' }, el('span', { class: 'field__label' }, label), input,
      hint ? el('span', { class: 'hint', text: hint }) : null, errorBox(name))];
  };
  const [rhoIn, rhoField] = textField('rho', 'ρ(ζ)', 'e.g. z^2 - z', null);
  const [sigmaIn, sigmaField] = textField('sigma', 'σ(ζ)', 'e.g. 3/2 z - 1/2', 'Write in z, ζ, zeta, x or w. ρ(ζ)u = hσ(ζ)f with ζ the shift: ρ = Σ α_j ζ^j.');
  panels.rhosigma = el('div', { class: 'scheme-editor__panel' }, rhoField, sigmaField);

  // alpha / beta table
  const kInput = el('input', { class: 'input input--narrow', type: 'number', min: 1, max: MAX_K, step: 1, 'data-field': 'k',
    'aria-label': 'steps k', onchange: () => resizeAB(Number(kInput.value)) });
  const abTable = el('table', { class: 'coef-table', 'data-field': 'alphabeta' });
  panels.alphabeta = el('div', { class: 'scheme-editor__panel' },
    el('div', { class: 'field field--inline' }, el('span', { class: 'field__label', text: 'steps k' }), kInput),
    el('div', { class: 'coef-table__wrap' }, abTable),
    el('span', { class: 'hint', text: 'Σ α_j u_{n+j} = h Σ β_j f_{n+j}, j = 0..k, ascending; fractions welcome (-4/3).' }),
    errorBox('alpha'), errorBox('beta'));

  // Butcher tableau
  const sInput = el('input', { class: 'input input--narrow', type: 'number', min: 1, max: MAX_S, step: 1, 'data-field': 's',
    'aria-label': 'stages s', onchange: () => resizeTableau(Number(sInput.value)) });
  const tabTable = el('table', { class: 'butcher', 'data-field': 'tableau' });
  panels.tableau = el('div', { class: 'scheme-editor__panel' },
    el('div', { class: 'field field--inline' }, el('span', { class: 'field__label', text: 'stages s' }), sInput),
    el('div', { class: 'coef-table__wrap' }, tabTable),
    el('span', { class: 'hint', text: 'c on the left, A in the box, b below. Leave c empty to use the row sums of A.' }),
    errorBox('tableau'));

  // R(z)
  const [rIn, rField] = textField('stability', 'R(z)', 'e.g. (1 + z/2)/(1 - z/2)', 'One-step stability function, polynomial or rational in z.');
  panels.stability = el('div', { class: 'scheme-editor__panel' }, rField);

  // predictor-corrector
  const predSel = el('select', { class: 'input', 'data-field': 'predictor', 'aria-label': 'predictor', onchange: () => edit({ predictor: predSel.value }, 'predictor') });
  const corrSel = el('select', { class: 'input', 'data-field': 'corrector', 'aria-label': 'corrector', onchange: () => edit({ corrector: corrSel.value }, 'corrector') });
  const mSel = el('select', { class: 'input input--narrow', 'data-field': 'm', 'aria-label': 'corrections m', onchange: () => edit({ m: Number(mSel.value) }, 'm') },
    ...[1, 2, 3].map((m) => el('option', { value: m, text: String(m) })));
  const modeSel = el('select', { class: 'input input--narrow', 'data-field': 'pcMode', 'aria-label': 'mode', onchange: () => edit({ pcMode: modeSel.value }, 'pcMode') },
    el('option', { value: 'PECE', text: 'P(EC)ᵐE' }), el('option', { value: 'PEC', text: 'P(EC)ᵐ' }));
  panels.pc = el('div', { class: 'scheme-editor__panel' },
    el('div', { class: 'field-row' },
      el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'predictor (explicit)' }), predSel),
      el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'corrector (implicit)' }), corrSel)),
    el('div', { class: 'field-row' },
      el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'corrections m' }), mSel),
      el('label', { class: 'field' }, el('span', { class: 'field__label', text: 'mode' }), modeSel)),
    el('span', { class: 'hint', text: 'The pair has its own region: neither the predictor’s nor the corrector’s.' }),
    errorBox('pc'));

  const copyBtn = el('button', { type: 'button', class: 'link-button', 'data-role': 'edit-copy', text: 'Edit a copy of these coefficients',
    onclick: () => copyIntoCustom() });
  const generalBox = errorBox('general');
  const body = el('div', { class: 'scheme-editor__body' }, tabs, ...Object.values(panels), generalBox, copyBtn);
  const stencilSlot = el('div', { 'data-role': 'stencil' });
  root.append(header, body, stencilSlot);

  // --- alpha/beta and tableau grids ---------------------------------------------------
  function renderAB() {
    const s = cur();
    const k = s.alpha.length - 1;
    kInput.value = k;
    const head = el('tr', {}, el('th', {}), ...s.alpha.map((_, j) => el('th', { text: j === k ? `j=${j} (new)` : `j=${j}` })));
    const row = (name, label) => el('tr', {}, el('th', { text: label }), ...s[name].map((v, j) => el('td', {},
      el('input', { class: 'input input--cell input--mono', type: 'text', value: v, spellcheck: 'false', 'data-field': `${name}[${j}]`,
        'aria-label': `${name}_${j}`, oninput: (e) => { const list = cur()[name].slice(); list[j] = e.target.value; edit({ [name]: list }, name); } }))));
    abTable.replaceChildren(el('thead', {}, head), el('tbody', {}, row('alpha', 'α'), row('beta', 'β')));
  }

  function resizeAB(k) {
    if (!Number.isInteger(k) || k < 1 || k > MAX_K) { kInput.value = cur().alpha.length - 1; return; }
    const s = cur();
    const grow = (list) => (k + 1 > list.length ? [...list, ...Array(k + 1 - list.length).fill('')] : list.slice(list.length - (k + 1)));
    edit({ alpha: grow(s.alpha), beta: grow(s.beta) }, 'alpha');
    renderAB();
  }

  function renderTableau() {
    const s = cur();
    const n = s.A.length;
    sInput.value = n;
    const cell = (value, field, label, onInput) => el('td', {}, el('input', { class: 'input input--cell input--mono', type: 'text', value,
      spellcheck: 'false', 'data-field': field, 'aria-label': label, oninput: (e) => onInput(e.target.value) }));
    const rows = s.A.map((row, i) => el('tr', {},
      cell(s.c[i], `c[${i + 1}]`, `c_${i + 1}`, (v) => { const c = cur().c.slice(); c[i] = v; edit({ c }, 'tableau'); }),
      ...row.map((v, j) => cell(v, `A[${i + 1}][${j + 1}]`, `a_${i + 1}${j + 1}`, (val) => {
        const A = cur().A.map((r) => r.slice()); A[i][j] = val; edit({ A }, 'tableau');
      }))));
    const bRow = el('tr', { class: 'butcher__b' }, el('td', { class: 'butcher__corner', text: '' }),
      ...s.b.map((v, j) => cell(v, `b[${j + 1}]`, `b_${j + 1}`, (val) => { const b = cur().b.slice(); b[j] = val; edit({ b }, 'tableau'); })));
    tabTable.replaceChildren(el('tbody', {}, ...rows, bRow));
  }

  function resizeTableau(n) {
    if (!Number.isInteger(n) || n < 1 || n > MAX_S) { sInput.value = cur().A.length; return; }
    const s = cur();
    const A = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => s.A[i]?.[j] ?? ''));
    const fit = (v) => Array.from({ length: n }, (_, i) => v[i] ?? '');
    edit({ A, b: fit(s.b), c: fit(s.c) }, 'tableau');
    renderTableau();
  }

  // The describe() that belongs to what the fields say now, or null while it is on its way.
  function currentDescribe() {
    const a = store.get()[anaKey];
    return a && a.describeFor === a.specKey && !store.get()[errKey] ? a.describe : null;
  }

  function emptyMode(mode) {
    const s = cur();
    const blank = (v) => String(v ?? '').trim() === '';
    if (mode === 'rhosigma') return blank(s.rho) && blank(s.sigma);
    if (mode === 'alphabeta') return s.alpha.every(blank) && s.beta.every(blank);
    if (mode === 'tableau') return s.A.flat().every(blank) && s.b.every(blank) && s.c.every(blank);
    if (mode === 'stability') return blank(s.stability);
    return false;
  }

  // Fields of a custom form filled from the scheme now shown, when it can be written that way.
  function prefillFor(mode) {
    const d = currentDescribe();
    if (!d) return null;
    if (mode === 'rhosigma' && d.rho && d.sigma) return { rho: d.rho, sigma: d.sigma };
    if (mode === 'alphabeta' && d.alpha && d.beta && d.alpha.length <= MAX_K + 1) return { alpha: d.alpha.slice(), beta: d.beta.slice() };
    if (mode === 'tableau' && d.tableau && d.tableau.A.length <= MAX_S) return { A: d.tableau.A.map((r) => r.slice()), b: d.tableau.b.slice(), c: d.tableau.c.slice() };
    if (mode === 'stability' && d.stability_function) {
      const { P, Q } = d.stability_function;
      return { stability: Q === '1' ? P : `(${P})/(${Q})` };
    }
    return null;
  }

  function copyIntoCustom() {
    const d = currentDescribe();
    if (!d) return;
    const mode = d.tableau && d.tableau.A.length <= MAX_S ? 'tableau' : d.alpha ? 'alphabeta' : 'stability';
    const fill = prefillFor(mode);
    if (!fill) return;
    edit({ mode, ...fill }, 'mode');
    load();
  }

  // --- catalogue menus -----------------------------------------------------------------
  function fillSelect(sel, families, filter, value) {
    const groups = [];
    for (const fam of families) {
      const items = fam.schemes.filter(filter);
      if (!items.length) continue;
      groups.push(el('optgroup', { label: fam.family }, ...items.map((e) => el('option', { value: e.name, text: catalogueOption(e) }))));
    }
    const known = families.some((f) => f.schemes.some((e) => e.name === value));
    if (!known && value) groups.unshift(el('option', { value, text: value }));
    sel.replaceChildren(...groups);
    sel.value = value;
  }

  function renderCatalogue() {
    const cat = store.get().catalogue;
    const s = cur();
    if (!cat) {
      select.replaceChildren(el('option', { value: s.name, text: s.name }));
      select.value = s.name;
      return;
    }
    const fams = cat.families;
    fillSelect(select, fams, () => true, s.name);
    const multistep = (e) => e.kind === 'multistep';
    fillSelect(predSel, fams, (e) => multistep(e) && e.explicit, s.predictor);
    fillSelect(corrSel, fams, (e) => multistep(e) && !e.explicit, s.corrector);
    renderPickInfo();
  }

  function renderPickInfo() {
    const cat = store.get().catalogue;
    const s = cur();
    const entry = cat?.families.flatMap((f) => f.schemes).find((e) => e.name === s.name);
    pickInfo.textContent = entry
      ? `${entry.family} · ${entry.evaluations_per_step} evaluation${entry.evaluations_per_step === 1 ? '' : 's'} of f per step${entry.order === null ? ' · order still being derived' : ''}`
      : 'Any catalogue name works here, also parametrised ones (ab5, bdf3, rkc20, theta:0.7).';
  }

  // --- showing state -------------------------------------------------------------------
  function showMode() {
    const mode = cur().mode;
    for (const [k, p] of Object.entries(panels)) p.hidden = k !== mode;
    for (const [k, b] of Object.entries(tabButtons)) {
      b.classList.toggle('is-active', k === mode);
      b.setAttribute('aria-selected', String(k === mode));
    }
    root.dataset.mode = mode;
  }

  // Write a whole scheme state into the fields (startup and loading a configuration only).
  function load() {
    const s = cur();
    rhoIn.value = s.rho;
    sigmaIn.value = s.sigma;
    rIn.value = s.stability;
    mSel.value = String(s.m);
    modeSel.value = s.pcMode;
    renderAB();
    renderTableau();
    renderCatalogue();
    showMode();
  }

  function showErrors() {
    const info = store.get()[errKey];
    const k = info ? fieldKey(info.field) : null;
    root.querySelectorAll('.is-invalid').forEach((n) => n.classList.remove('is-invalid'));
    const texts = { rho: rhoIn.value, sigma: sigmaIn.value, stability: rIn.value };
    const panel = panels[cur().mode];
    let target = null;
    if (info) {
      if (errBoxes[k] && panel.contains(errBoxes[k])) target = k;
      else target = cur().mode === 'catalogue' ? 'general-catalogue' : 'general';
    }
    for (const [name, box] of Object.entries(errBoxes)) renderFieldError(box, name === target ? info : null, texts[name]);
    if (!info) return;
    const mark = (sel) => root.querySelector(sel)?.classList.add('is-invalid');
    if (k === 'rho' || k === 'sigma' || k === 'stability') mark(`[data-field="${k}"]`);
    if (k === 'alpha' || k === 'beta') {
      const i = entryIndex(info);
      if (i !== null) mark(`[data-field="${k}[${i}]"]`); else mark('[data-field="alphabeta"]');
    }
    if (k === 'tableau') {
      const c = tableauCell(info);
      if (c?.part === 'A') mark(`[data-field="A[${c.i}][${c.j}]"]`);
      else if (c) mark(`[data-field="${c.part}[${c.i}]"]`);
      else mark('[data-field="tableau"]');
    }
    if (k === 'general' && cur().mode === 'catalogue') mark('[data-field="name"]');
  }

  function showTitle() {
    const a = store.get()[anaKey];
    title.textContent = a?.describe ? schemeTitle(cur(), a.describe) : '';
    copyBtn.hidden = !(currentDescribe() && cur().mode === 'catalogue');
  }

  function showCompare() {
    if (slot !== 'b') return;
    const on = !!store.get().compare;
    toggle.querySelector('input').checked = on;
    body.hidden = !on;
    stencilSlot.hidden = !on;
    root.classList.toggle('is-off', !on);
  }
  if (toggle) {
    toggle.querySelector('input').addEventListener('change', (e) => {
      store.set({ compare: e.target.checked });
      onEdit(slot, 'compare');
    });
  }

  store.subscribe((state, changed) => {
    if (changed.has('catalogue')) renderCatalogue();
    if (changed.has(errKey) || changed.has(key)) showErrors();
    if (changed.has(anaKey) || changed.has(key) || changed.has(errKey)) showTitle();
    if (changed.has(key)) renderPickInfo();
    if (changed.has('compare')) showCompare();
  });
  load();
  showCompare();
  showTitle();
  return { load, stencilSlot };
}
