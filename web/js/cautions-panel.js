// Cautions in plain words, for the schemes and spectrum shown (texts come from the server).

import { el } from './format.js';
import { activeSlots } from './controller.js';

export function mountCautionsPanel(root, { store }) {
  root.classList.add('cautions-panel', 'panel');
  const list = el('ul', { class: 'cautions-panel__list' });
  root.append(el('div', { class: 'panel__head' }, el('span', { class: 'cautions-panel__icon', 'aria-hidden': 'true', text: '!' }), el('h2', { class: 'panel__title', text: 'Before you trust this step' })), list);

  function render() {
    const state = store.get();
    const seen = new Map();
    for (const s of activeSlots(state)) {
      for (const c of state[s === 'a' ? 'limitA' : 'limitB']?.cautions || []) if (!seen.has(c.key)) seen.set(c.key, c.text);
    }
    if (!seen.size && state.catalogue?.cautions) state.catalogue.cautions.forEach((t, i) => seen.set(`general-${i}`, t));
    const urgent = ['root-condition', 'growing', 'partial'];
    const items = [...seen.entries()].sort((a, b) => (urgent.includes(b[0]) ? 1 : 0) - (urgent.includes(a[0]) ? 1 : 0));
    list.replaceChildren(...items.map(([key, text]) => el('li', { class: urgent.includes(key) ? 'is-urgent' : '', 'data-caution': key, text })));
  }
  store.subscribe((state, changed) => {
    if (['limitA', 'limitB', 'compare', 'catalogue'].some((k) => changed.has(k))) render();
  });
  render();
}
