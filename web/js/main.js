// Entry point: builds the store, mounts the components, restores the state from the URL (or
// opens the demo) and starts the first analyses.

import { createStore } from './store.js';
import { createController, activeSlots } from './controller.js';
import { fetchCatalogue, fetchModels } from './api.js';
import { mountSchemeEditor } from './scheme-editor.js';
import { mountStencilView } from './stencil-view.js';
import { mountSpectrumPanel } from './spectrum-panel.js';
import { mountStepControl } from './step-control.js';
import { mountRegionPlot } from './region-plot.js';
import { mountPropertyTable } from './property-table.js';
import { mountCautionsPanel } from './cautions-panel.js';
import { mountVerifyPanel } from './verify-panel.js';
import { mountAccuracyPanel } from './accuracy-panel.js';
import { mountShareBar, mountNoticeArea } from './share-bar.js';
import { decodeShared, fromShared, HASH_PREFIX } from './share-state.js';
import { demoState, DEMO_NOTE } from './demo.js';

const CATALOGUE_POLLS = 90;
const CATALOGUE_POLL_MS = 2000;

const store = createStore({
  ...demoState(),
  catalogue: null, models: null, notices: [], share: null, demo: null, restoring: true,
  analysisA: null, analysisB: null, errorA: null, errorB: null,
  limitA: null, limitB: null, limitErrorA: null, limitErrorB: null,
  spectrum: null, spectrumError: null, job: null, jobId: null,
  verifyResult: null, verifyBusy: false, verifyError: null, viewRevision: 0,
  accuracyA: null, accuracyB: null, accuracyError: null, accuracyBusy: false, accuracyFor: null, hDragging: false,
});
const controller = createController(store);
const $ = (id) => document.getElementById(id);

mountNoticeArea($('notices'), { store });
const onEdit = (slot, source) => {
  if (source !== 'mode' && source !== 'compare') controller.noteKeystroke(slot);
  if (source === 'compare') {
    if (store.get().compare) controller.analyseSlot('b', 0);
    return;
  }
  controller.analyseSlot(slot);
};
const editorA = mountSchemeEditor($('scheme-a'), { slot: 'a', store, onEdit });
const editorB = mountSchemeEditor($('scheme-b'), { slot: 'b', store, onEdit });
mountStencilView(editorA.stencilSlot, { store, slot: 'a' });
mountStencilView(editorB.stencilSlot, { store, slot: 'b' });
const spectrumPanel = mountSpectrumPanel($('spectrum'), { store, controller });
mountStepControl($('step-control'), { store, controller });
const plot = mountRegionPlot($('region-plot'), { store, controller });
controller.attachPlot(plot);
mountPropertyTable($('property-table'), { store });
mountCautionsPanel($('cautions'), { store });
mountAccuracyPanel($('accuracy'), { store });
mountVerifyPanel($('verify'), { store, controller });
mountShareBar($('share-bar'), { store, onLoadConfig });

function describeProblems(problems, what) {
  return `${what}: ${problems.join('; ')}.`;
}

// Apply shared data (link or file); returns what the first analyses should still choose.
function applyShared(obj, source) {
  const defaults = demoState();
  const { patch, problems } = fromShared(obj, defaults);
  const restoredValues = patch.restoredValues;
  delete patch.restoredValues;
  store.set({ ...defaults, ...patch, restoring: true, demo: null, analysisA: null, analysisB: null, limitA: null, limitB: null,
    errorA: null, errorB: null, spectrum: null, spectrumError: null, job: null, jobId: null, verifyResult: null,
    accuracyA: null, accuracyB: null, accuracyError: null,
    viewRevision: store.get().viewRevision + 1 });
  if (problems.length) controller.notice('warning', describeProblems(problems, source), 'restore');
  else controller.notice('warning', null, 'restore');
  return { restoredValues, needH: !('h' in patch), needView: !('view' in patch) };
}

function start({ restoredValues, needH, needView }) {
  editorA.load();
  editorB.load();
  spectrumPanel.load();
  store.set({ restoring: false });
  controller.expectInitial(needH || needView ? { h: needH, view: needView } : null);
  for (const s of activeSlots(store.get())) controller.analyseSlot(s, 0);
  if (restoredValues) {
    const extremes = {};
    controller.setSpectrum({ values: restoredValues, count: restoredValues.length, extremes, notes: ['restored from the link or file; re-upload the original to recompute extremes'], source: `${store.get().spectrumInput.file?.name || 'values'} (restored)`, partial: false });
  } else {
    controller.spectrumFromInput(0);
  }
}

function onLoadConfig(obj, error, name) {
  if (error) {
    controller.notice('error', error, 'load');
    return;
  }
  controller.notice('error', null, 'load');
  start(applyShared(obj, `Loaded ${name}`));
}

async function boot() {
  controller.watchShare();
  controller.watchAccuracy();
  fetchModels().then((m) => store.set({ models: m.models })).catch(() => controller.notice('error', 'The list of semi-discretisations could not be loaded.', 'models'));
  pollCatalogue();
  const hash = location.hash;
  if (hash.startsWith(HASH_PREFIX)) {
    let obj = null;
    try {
      obj = await decodeShared(hash.slice(HASH_PREFIX.length));
    } catch (err) {
      controller.notice('warning', `The link’s configuration could not be read (${err.message}); the demo opened instead.`, 'restore');
    }
    if (obj) {
      start(applyShared(obj, 'Opened from the link'));
      return;
    }
  } else if (hash && hash !== '#') {
    controller.notice('warning', 'The link carries no stepfence configuration; the demo opened instead.', 'restore');
  }
  store.set({ demo: DEMO_NOTE });
  start({ restoredValues: null, needH: true, needView: true });
}

// Orders of catalogue entries are derived once on the server; ask again until complete.
async function pollCatalogue() {
  for (let i = 0; i < CATALOGUE_POLLS; i++) {
    try {
      const cat = await fetchCatalogue();
      store.set({ catalogue: cat });
      if (cat.complete) return;
    } catch {
      /* the server notice comes from the analyses */
    }
    await new Promise((res) => setTimeout(res, CATALOGUE_POLL_MS));
  }
}

window.__stepfence = { store, controller };
boot();
