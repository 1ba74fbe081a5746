// The region plot: filled regions, boundary loci, A(alpha) wedges, axis intervals, the h*lambda
// points (flagged outside by the server's per-eigenvalue limits) and the binding points.
// Plotly.react with a constant uirevision keeps the user's zoom across recomputes.

import { el } from './format.js';
import { boundaryCsv, buildFigure, perEigenvalueCsv, STYLES, UIREVISION } from './traces.js';
import { activeSlots } from './controller.js';
import { shortName } from './scheme-spec.js';
import { downloadFigure, downloadText, stamp } from './export.js';
import { toShared } from './share-state.js';

const CONFIG = {
  responsive: true, displaylogo: false, showSendToCloud: false, showEditInChartStudio: false, scrollZoom: true,
  doubleClick: false, modeBarButtonsToRemove: ['select2d', 'lasso2d', 'autoScale2d', 'resetScale2d', 'toImage', 'sendChartToCloud'],
};

// A describe() still on its way for a just-typed scheme is not drawn with the new region.
function current(analysis) {
  if (!analysis) return null;
  return analysis.describeFor === analysis.specKey ? analysis : { ...analysis, describe: null };
}

export function slotsOf(state) {
  return activeSlots(state).map((s) => ({
    style: STYLES[s],
    name: shortName(state[s === 'a' ? 'schemeA' : 'schemeB'], state[s === 'a' ? 'analysisA' : 'analysisB']?.describe),
    analysis: current(state[s === 'a' ? 'analysisA' : 'analysisB']),
    limit: state[s === 'a' ? 'limitA' : 'limitB'],
    stale: !!state[s === 'a' ? 'errorA' : 'errorB'],
  }));
}

export function fullAnalysis(state) {
  const slots = slotsOf(state);
  return {
    tool: 'stepfence',
    created: new Date().toISOString(),
    configuration: toShared(state),
    h: state.h,
    schemes: Object.fromEntries(slots.map((s) => [s.style.tag, { name: s.name, describe: s.analysis?.describe ?? null, limit: s.limit ?? null }])),
    spectrum: state.spectrum,
    verification: state.verifyResult ?? null,
    cautions: [...new Map(slots.flatMap((s) => s.limit?.cautions || []).map((c) => [c.key, c.text])).values()],
  };
}

export function mountRegionPlot(root, { store, controller }) {
  root.classList.add('region-plot', 'panel');
  const gd = el('div', { class: 'region-plot__figure', 'data-role': 'figure' });
  const layoutBtns = el('div', { class: 'segmented', 'data-role': 'layout-toggle' },
    el('button', { type: 'button', class: 'segmented__item', 'data-layout': 'overlay', text: 'Overlay', onclick: () => store.set({ layout: 'overlay' }) }),
    el('button', { type: 'button', class: 'segmented__item', 'data-layout': 'side', text: 'Side by side', onclick: () => store.set({ layout: 'side' }) }));
  const stale = el('div', { class: 'region-plot__stale', hidden: true, 'data-role': 'stale' });
  const exportTo = (kind) => () => {
    const state = store.get();
    if (kind === 'png' || kind === 'svg') return downloadFigure(gd, kind);
    if (kind === 'boundary') return downloadText(boundaryCsv(slotsOf(state)), `stepfence-boundary-${stamp()}.csv`, 'text/csv');
    if (kind === 'limits') return downloadText(perEigenvalueCsv(state.spectrum?.values, slotsOf(state), state.h), `stepfence-limits-${stamp()}.csv`, 'text/csv');
    return downloadText(JSON.stringify(fullAnalysis(state), null, 2), `stepfence-analysis-${stamp()}.json`, 'application/json');
  };
  const toolbar = el('div', { class: 'region-plot__toolbar' },
    layoutBtns,
    el('div', { class: 'toolbar-group' }, el('span', { class: 'toolbar-group__label', text: 'fit' }),
      el('button', { type: 'button', class: 'button button--small', 'data-role': 'fit-region', text: 'region', onclick: () => controller.fitView('region') }),
      el('button', { type: 'button', class: 'button button--small', 'data-role': 'fit-points', text: 'points', onclick: () => controller.fitView('points') }),
      el('button', { type: 'button', class: 'button button--small', 'data-role': 'fit-both', text: 'both', onclick: () => controller.fitView('both') })),
    el('div', { class: 'toolbar-group' }, el('span', { class: 'toolbar-group__label', text: 'export' }),
      ...[['png', 'PNG'], ['svg', 'SVG'], ['boundary', 'CSV boundary'], ['limits', 'CSV limits'], ['json', 'JSON']].map(([k, t]) =>
        el('button', { type: 'button', class: 'button button--small', 'data-export': k, text: t, onclick: exportTo(k) }))));
  root.append(toolbar, stale, gd);

  let drawing = Promise.resolve(false);
  let drawCount = 0;
  let listening = false;

  function draw() {
    const state = store.get();
    const slots = slotsOf(state).filter((s) => s.analysis);
    if (!slots.length || !window.Plotly) return drawing;
    const fig = buildFigure({ slots, values: state.spectrum?.values, h: state.h, view: state.view, layout: state.layout,
      uirevision: `${UIREVISION}-${state.viewRevision || 0}` });
    drawing = window.Plotly.react(gd, fig.data, fig.layout, CONFIG).then(() => {
      drawCount += 1;
      gd.dataset.drawn = String(drawCount);
      if (!listening) {
        listening = true;
        gd.on('plotly_relayout', onRelayout);
      }
      followDisplayed();
      return true;
    });
    return drawing;
  }

  function onRelayout(ev) {
    if (!ev || !Object.keys(ev).some((k) => /^xaxis2?\.range|^yaxis2?\.range/.test(k))) return;
    const fl = gd._fullLayout;
    const view = { xlim: fl.xaxis.range.slice(), ylim: fl.yaxis.range.slice() };
    const old = store.get().view;
    if (old && old.xlim[0] === view.xlim[0] && old.xlim[1] === view.xlim[1] && old.ylim[0] === view.ylim[0] && old.ylim[1] === view.ylim[1]) return;
    controller.viewChanged(view);
  }

  // Equal axis scale can make plotly show more than the view asked for (a new layout, a
  // resized window): the shown box becomes the view, so the regions are computed for it.
  function followDisplayed() {
    const fl = gd._fullLayout;
    const view = store.get().view;
    if (!view || !fl?.xaxis?.range || !fl?.yaxis?.range) return;
    const shown = { xlim: fl.xaxis.range.slice(), ylim: fl.yaxis.range.slice() };
    const off = (a, b) => Math.abs(a[0] - b[0]) + Math.abs(a[1] - b[1]) > 0.01 * (b[1] - b[0]);
    if (off(shown.xlim, view.xlim) || off(shown.ylim, view.ylim)) controller.viewChanged(shown);
  }

  function showChrome() {
    const state = store.get();
    layoutBtns.hidden = !state.compare;
    for (const b of layoutBtns.querySelectorAll('button')) b.classList.toggle('is-active', b.dataset.layout === state.layout);
    const staleSlots = slotsOf(state).filter((s) => s.stale && s.analysis).map((s) => s.style.tag);
    stale.hidden = !staleSlots.length;
    stale.textContent = staleSlots.length ? `Scheme ${staleSlots.join(' and ')}: the input has an error, so the plot still shows the last scheme that could be read.` : '';
  }

  const KEYS = ['analysisA', 'analysisB', 'limitA', 'limitB', 'spectrum', 'h', 'view', 'layout', 'compare', 'errorA', 'errorB', 'viewRevision'];
  store.subscribe((state, changed) => {
    if (KEYS.some((k) => changed.has(k))) draw();
    if (changed.has('compare') || changed.has('layout') || changed.has('errorA') || changed.has('errorB') || changed.has('analysisA') || changed.has('analysisB')) showChrome();
  });
  showChrome();

  return {
    lastDraw: () => drawing,
    aspect() {
      const fl = gd._fullLayout;
      const side = store.get().layout === 'side' && store.get().compare;
      if (fl?._size?.w > 0) return fl._size.h / (fl._size.w * (side ? 0.485 : 1));
      const w = gd.clientWidth || 800;
      return (gd.clientHeight || 520) / (w * (side ? 0.485 : 1));
    },
    element: gd,
  };
}
