// Share bar: the link that restores the whole state, and a configuration file to save and load
// when the link would be too long.

import { el, fmt } from './format.js';
import { toShared, LINK_LIMIT } from './share-state.js';
import { downloadText, stamp } from './export.js';

export function mountShareBar(root, { store, onLoadConfig }) {
  root.classList.add('share-bar');
  const linkIn = el('input', { class: 'input input--mono share-bar__link', type: 'text', readonly: true, 'data-role': 'share-link', 'aria-label': 'share link' });
  const msg = el('p', { class: 'hint', 'data-role': 'share-message' });
  const copyBtn = el('button', { type: 'button', class: 'button button--small', 'data-role': 'copy-link', text: 'Copy',
    onclick: async () => {
      linkIn.select();
      try {
        await navigator.clipboard.writeText(linkIn.value);
        copyBtn.textContent = 'Copied';
      } catch {
        copyBtn.textContent = 'Selected — press Ctrl+C';
      }
      setTimeout(() => { copyBtn.textContent = 'Copy'; }, 1800);
    } });
  const pop = el('div', { class: 'share-bar__pop', hidden: true, 'data-role': 'share-pop' },
    el('div', { class: 'share-bar__pop-row' }, linkIn, copyBtn), msg);
  const shareBtn = el('button', { type: 'button', class: 'button', 'data-role': 'share', text: 'Share link',
    onclick: () => { pop.hidden = !pop.hidden; render(); if (!pop.hidden) linkIn.select(); } });
  const saveBtn = el('button', { type: 'button', class: 'button', 'data-role': 'save-config', text: 'Save configuration',
    onclick: () => downloadText(JSON.stringify({ stepfence_configuration: 1, ...toShared(store.get()) }, null, 2), `stepfence-configuration-${stamp()}.json`, 'application/json') });
  const loadIn = el('input', { type: 'file', accept: '.json,application/json', class: 'visually-hidden', 'data-role': 'load-config-input',
    onchange: async () => {
      const f = loadIn.files?.[0];
      loadIn.value = '';
      if (!f) return;
      let obj;
      try {
        obj = JSON.parse(await f.text());
      } catch (e) {
        onLoadConfig(null, `${f.name} is not a readable configuration file (not JSON: ${e.message})`);
        return;
      }
      onLoadConfig(obj, null, f.name);
    } });
  const loadBtn = el('label', { class: 'button', 'data-role': 'load-config', tabindex: 0 }, 'Load configuration', loadIn);
  root.append(shareBtn, saveBtn, loadBtn, pop);

  function render() {
    const share = store.get().share;
    linkIn.value = share?.url || location.href;
    if (!share) { msg.textContent = ''; return; }
    msg.classList.toggle('is-warning', share.tooLong);
    msg.textContent = share.omitted
      ? 'This spectrum has too many values to travel in a link, so the link leaves them out. Save the configuration as a file and send that instead.'
      : share.tooLong
        ? `This link is ${share.length} characters long — more than about ${LINK_LIMIT}, which mail and chat tools may cut. Save the configuration as a file and send that instead.`
        : `The link holds the whole configuration (${share.length} characters): both schemes, the spectrum or its generator, h, the safety factor and the view.`;
    shareBtn.classList.toggle('has-warning', share.tooLong);
  }
  store.subscribe((state, changed) => { if (changed.has('share')) render(); });
}

export function mountNoticeArea(root, { store }) {
  root.classList.add('notice-area');
  store.subscribe((state, changed) => {
    if (!changed.has('notices')) return;
    root.replaceChildren(...(state.notices || []).map((n) => el('div', { class: `notice notice--${n.kind}`, role: n.kind === 'error' ? 'alert' : 'status', 'data-notice': n.key },
      el('span', { class: 'notice__text', text: n.text }),
      el('button', { type: 'button', class: 'notice__close', 'aria-label': 'dismiss', text: '×',
        onclick: () => store.set({ notices: store.get().notices.filter((m) => m !== n) }) }))));
  });
}
