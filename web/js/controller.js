// Orchestration: input changes -> (debounced) server calls -> results in the store. Stale
// answers are dropped (each channel aborts its previous request). Failures land in the store
// as messages; no input is ever cleared by a failure.

import * as api from './api.js';
import { specOf } from './scheme-spec.js';
import { fitAspect, pointsBox, unionBox } from './traces.js';
import { encodeShared, HASH_PREFIX, LINK_LIMIT, toShared } from './share-state.js';

// 50 ms was tried for the region of a scheme being typed (2026-12-02): about 80 ms faster per
// edit, but the timing test then failed once in a fresh-clone CI run (no timing recorded in
// 30 s, cause not found), so the measured, stable 150 ms stays until that is understood.
export const TYPE_DEBOUNCE_MS = 150;
const VIEW_DEBOUNCE_MS = 220;
const DESCRIBE_DELAY_MS = 350;
const SHARE_DEBOUNCE_MS = 350;
const MAX_VALUES_IN_LINK = 20000;
const JOB_POLL_MS = 400;
const ACCURACY_DEBOUNCE_MS = 300;

const SLOT_KEYS = {
  a: { scheme: 'schemeA', analysis: 'analysisA', error: 'errorA', limit: 'limitA', limitError: 'limitErrorA' },
  b: { scheme: 'schemeB', analysis: 'analysisB', error: 'errorB', limit: 'limitB', limitError: 'limitErrorB' },
};

export function activeSlots(state) {
  return state.compare ? ['a', 'b'] : ['a'];
}

export function createController(store) {
  const channels = new Map();
  const keystroke = { a: null, b: null };
  let plot = null;
  const timings = (window.__stepfenceTimings = window.__stepfenceTimings || []);

  function channel(name) {
    if (!channels.has(name)) channels.set(name, { timer: null, abort: null, seq: 0 });
    return channels.get(name);
  }

  // Run fn(signal, isCurrent) after delay ms, superseding any earlier run on the same channel.
  function schedule(name, delay, fn) {
    const ch = channel(name);
    clearTimeout(ch.timer);
    return new Promise((resolve) => {
      ch.timer = setTimeout(async () => {
        ch.abort?.abort();
        const ac = new AbortController();
        ch.abort = ac;
        const seq = ++ch.seq;
        try {
          const out = await fn(ac.signal, () => seq === ch.seq);
          if (out !== null && out !== undefined) recovered();
          resolve(out);
        } catch (err) {
          if (err?.name !== 'AbortError') console.error(`stepfence: ${name} failed`, err);
          resolve(undefined);
        }
      }, delay);
    });
  }

  function notice(kind, text, key = kind) {
    const list = (store.get().notices || []).filter((n) => n.key !== key);
    if (text) list.push({ key, kind, text });
    store.set({ notices: list });
  }

  // Requests that failed on the server's side, asked again once any request succeeds: the
  // editors keep the text, and the page catches up by itself when the server is back.
  const retries = new Map();

  function serverTrouble(err, retry = null) {
    if (err?.status === 0 || err?.status >= 500) {
      notice('error', `${err.message} Your input is kept; it will be used again on the next change.`, 'server');
      if (retry) retries.set(retry[0], retry[1]);
      return true;
    }
    notice('error', null, 'server');
    return false;
  }

  function recovered() {
    const hadNotice = (store.get().notices || []).some((n) => n.key === 'server');
    if (!hadNotice && !retries.size) return;
    notice('error', null, 'server');
    const again = [...retries.values()];
    retries.clear();
    again.forEach((fn) => fn());
  }

  // --- schemes -------------------------------------------------------------------------
  function noteKeystroke(slot) {
    keystroke[slot] = performance.now();
  }

  function gridFor(view) {
    return view ? 240 : 200;
  }

  // Region first (fast, redrawn while typing), then the slower properties of the scheme.
  function analyseSlot(slot, delay = TYPE_DEBOUNCE_MS) {
    const k = SLOT_KEYS[slot];
    clearTimeout(channel(`describe-${slot}`).timer);
    return schedule(`analyse-${slot}`, delay, async (signal, current) => {
      const state = store.get();
      const spec = specOf(state[k.scheme]);
      const specKey = JSON.stringify(spec);
      const view = state.view;
      const failed = (err) => {
        if (err?.name === 'AbortError' || !current()) throw err;
        if (!serverTrouble(err, [`analyse-${slot}`, () => analyseSlot(slot, 0)])) store.set({ [k.error]: err.info });
        else store.set({ [k.error]: { field: 'server', message: err.message } });
        keystroke[slot] = null;
        return null;
      };
      let data;
      const t0 = keystroke[slot];
      const tSend = performance.now();
      try {
        data = await api.analyse(spec, view, gridFor(view), ['region'], signal);
      } catch (err) {
        return failed(err);
      }
      if (!current()) return null;
      notice('error', null, 'server');
      const tGot = performance.now();
      const prev = store.get()[k.analysis];
      const known = prev && prev.describeFor === specKey;
      store.set({ [k.analysis]: { ...(prev || {}), region: data.region, specKey, describe: prev?.describe ?? null, stencil: prev?.stencil ?? null, describeFor: prev?.describeFor ?? null }, [k.error]: null });
      const drawn = plot ? await plot.lastDraw() : null;
      // timed only when no newer keystroke came in meanwhile (that one gets its own timing)
      if (t0 !== null && drawn && keystroke[slot] === t0) {
        const tDone = performance.now();
        const rec = { slot, total_ms: tDone - t0, debounce_ms: delay, request_ms: tGot - tSend, server_ms: data.elapsed_ms, draw_ms: tDone - tGot };
        timings.push(rec);
        console.info(`stepfence timing: keystroke-to-redraw ${rec.total_ms.toFixed(1)} ms (debounce ${delay} ms, request ${rec.request_ms.toFixed(1)} ms of which server ${data.elapsed_ms} ms, draw ${rec.draw_ms.toFixed(1)} ms)`);
        keystroke[slot] = null;
      }
      if (prev?.specKey !== specKey || !store.get()[k.limit]) limitSlot(slot, 0);
      if (!known) describeSlot(slot, specKey);
      return data;
    });
  }

  // Properties wait for a pause in typing: each is slower to derive than a region, and stacking
  // them up while the user types would slow the region redraws down.
  function describeSlot(slot, specKey) {
    const k = SLOT_KEYS[slot];
    return schedule(`describe-${slot}`, DESCRIBE_DELAY_MS, async (signal, current) => {
      const spec = specOf(store.get()[k.scheme]);
      if (JSON.stringify(spec) !== specKey) return null;
      let info;
      try {
        info = await api.analyse(spec, null, 16, ['describe'], signal);
      } catch (err) {
        if (err?.name === 'AbortError' || !current()) throw err;
        if (!serverTrouble(err, [`analyse-${slot}`, () => analyseSlot(slot, 0)])) store.set({ [k.error]: err.info });
        return null;
      }
      const now = store.get()[k.analysis];
      if (!current() || now?.specKey !== specKey) return null;
      store.set({ [k.analysis]: { ...now, describe: info.describe, stencil: info.stencil, describeFor: specKey } });
      afterLimits();
      return info;
    });
  }

  // --- limits --------------------------------------------------------------------------
  function limitSlot(slot, delay = 0) {
    const k = SLOT_KEYS[slot];
    return schedule(`limit-${slot}`, delay, async (signal, current) => {
      const state = store.get();
      const values = state.spectrum?.values;
      if (!values?.length || !state[k.analysis] || state[k.error]) return null;
      let data;
      try {
        data = await api.limit(specOf(state[k.scheme]), values, state.safety, signal);
      } catch (err) {
        if (err?.name === 'AbortError' || !current()) throw err;
        serverTrouble(err, [`limit-${slot}`, () => limitSlot(slot)]);
        store.set({ [k.limitError]: err.info || { message: err.message } });
        return null;
      }
      if (!current()) return null;
      store.set({ [k.limit]: data, [k.limitError]: null });
      afterLimits();
      return data;
    });
  }

  function refreshLimits(delay = 0) {
    for (const s of activeSlots(store.get())) limitSlot(s, delay);
  }

  // First limits after a load: choose h and the view if the configuration did not say.
  let pendingInitial = null;
  function afterLimits() {
    if (!pendingInitial) return;
    const state = store.get();
    const slots = activeSlots(state);
    const ready = (s) => state[SLOT_KEYS[s].limit] && state[SLOT_KEYS[s].analysis]?.describeFor === state[SLOT_KEYS[s].analysis]?.specKey;
    if (!slots.every(ready)) return;
    const todo = pendingInitial;
    pendingInitial = null;
    // only what the user has not set in the meantime
    if (todo.h && !state.h) {
      const h = referenceStep(state);
      if (h) store.set({ h: h * state.safety });
    }
    if (todo.view && !state.view) fitView('both');
  }

  // The smallest finite h_max of the schemes shown, else a step putting |h*lambda| at 1.
  function referenceStep(state) {
    const finite = activeSlots(state).map((s) => state[SLOT_KEYS[s].limit]?.h_max).filter((x) => x > 0);
    if (finite.length) return Math.min(...finite);
    const vals = state.spectrum?.values || [];
    // a loop, not Math.max(...vals): spreading 10^5 arguments overflows the call stack
    let big = 0;
    for (const [re, im] of vals) big = Math.max(big, Math.hypot(re, im));
    return big > 0 ? 1 / big : null;
  }

  // --- spectrum ------------------------------------------------------------------------
  function spectrumFromInput(delay = TYPE_DEBOUNCE_MS) {
    return schedule('spectrum', delay, async (signal, current) => {
      const inp = store.get().spectrumInput;
      let data;
      try {
        if (inp.mode === 'text') {
          if (!inp.text.trim()) {
            store.set({ spectrumError: { field: 'text', message: 'paste at least one eigenvalue' } });
            return null;
          }
          data = await api.parseSpectrum(inp.text, signal);
        } else if (inp.mode === 'model') {
          data = await api.modelSpectrum(inp.model.kind, Number(inp.model.n), inp.model.params, signal);
        } else {
          return null;
        }
      } catch (err) {
        if (err?.name === 'AbortError' || !current()) throw err;
        serverTrouble(err, ['spectrum', () => spectrumFromInput(0)]);
        store.set({ spectrumError: err.info || { message: err.message } });
        return null;
      }
      if (!current()) return null;
      setSpectrum(data);
      return data;
    });
  }

  function setSpectrum(data, extra = {}) {
    store.set({ spectrum: data, spectrumError: null, limitA: null, limitB: null, verifyResult: null, ...extra });
    refreshLimits(0);
  }

  async function uploadFile(file, kind) {
    const ch = channel('spectrum');
    clearTimeout(ch.timer);
    ch.abort?.abort();
    ch.seq++;
    store.set({ spectrumError: null, job: null });
    let r;
    try {
      r = await api.uploadSpectrum(file, kind);
    } catch (err) {
      serverTrouble(err);
      store.set({ spectrumError: err.info || { message: err.message } });
      return;
    }
    if (!r.job) {
      setSpectrum(r.data, { jobId: null });
      return;
    }
    store.set({ job: r.data });
    await followJob(r.data.id);
  }

  async function followJob(id) {
    const limitMs = (store.get().job?.time_limit_seconds || 120) * 1000 + 15000;
    const start = performance.now();
    while (performance.now() - start < limitMs) {
      await new Promise((res) => setTimeout(res, JOB_POLL_MS));
      if (store.get().job?.id !== id) return;
      let j;
      try {
        j = await api.readJob(id);
      } catch (err) {
        serverTrouble(err);
        store.set({ job: null, spectrumError: err.info || { message: err.message } });
        return;
      }
      if (store.get().job?.id !== id) return;
      store.set({ job: j });
      if (j.state === 'done') {
        setSpectrum(j.result, { jobId: id });
        return;
      }
      if (['failed', 'cancelled', 'timed-out'].includes(j.state)) {
        store.set({ spectrumError: j.error || { field: 'file', message: j.message } });
        return;
      }
    }
    store.set({ spectrumError: { field: 'file', message: 'the matrix job did not finish in time; it was left to the server’s time limit' } });
  }

  async function cancelJob() {
    const j = store.get().job;
    if (!j) return;
    try {
      const r = await api.cancelJob(j.id);
      store.set({ job: r });
    } catch (err) {
      serverTrouble(err);
    }
  }

  // --- view ----------------------------------------------------------------------------
  function viewChanged(view) {
    store.set({ view });
    for (const s of activeSlots(store.get())) analyseSlot(s, VIEW_DEBOUNCE_MS);
  }

  // Fit the view to the regions ('region'), the points ('points') or both, then redraw.
  async function fitView(what = 'both') {
    const state = store.get();
    const slots = activeSlots(state);
    const boxes = [];
    if (what !== 'points') {
      const fresh = (await Promise.all(slots.map(async (s) => {
        const r = await api.analyse(specOf(state[SLOT_KEYS[s].scheme]), null, 16, ['region']).catch(() => null);
        return r && { region: r.region, bounded: state[SLOT_KEYS[s].analysis]?.describe?.bounded };
      }))).filter(Boolean);
      // with the points in view, an unbounded region's box (often huge) is left out when a
      // bounded region is there to frame them
      const bounded = fresh.filter((f) => f.bounded === true);
      const use = what === 'both' && bounded.length && state.spectrum ? bounded : fresh;
      for (const f of use) boxes.push({ xlim: f.region.xlim, ylim: f.region.ylim });
    }
    if (what !== 'region') {
      const pb = pointsBox(state.spectrum?.values, state.h);
      if (pb) boxes.push(unionBox([pb, { xlim: [0, 0], ylim: [0, 0] }]));
    }
    const box = unionBox(boxes);
    if (!box) return;
    const aspect = plot ? plot.aspect() : 0.6;
    store.set({ view: fitAspect(box, aspect), viewRevision: (store.get().viewRevision || 0) + 1 });
    for (const s of slots) analyseSlot(s, 0);
  }

  // --- verification --------------------------------------------------------------------
  async function runVerify(steps) {
    const state = store.get();
    const slots = activeSlots(state);
    store.set({ verifyBusy: true, verifyError: null });
    try {
      const results = await Promise.all(slots.map(async (s) => {
        const body = { scheme: specOf(state[SLOT_KEYS[s].scheme]), h: state.h, steps };
        if (state.jobId) body.job = state.jobId;
        else body.eigenvalues = state.spectrum.values;
        return { slot: s, result: await api.verify(body) };
      }));
      store.set({ verifyResult: { h: state.h, steps, results }, verifyBusy: false });
    } catch (err) {
      serverTrouble(err);
      store.set({ verifyError: err.info || { message: err.message }, verifyBusy: false });
    }
  }

  // --- accuracy beside stability -------------------------------------------------------
  // Each shown scheme's accuracy report for the spectrum, h, tol and per; A's also compares the
  // work with B. Only the last scheme that could be read is sent (the analysed specKey), so a
  // scheme being typed keeps its last report instead of an error here. While the h slider is
  // dragged nothing is asked (the page promises no server call per slider move); the release
  // asks once.
  const ACCURACY_KEYS = ['analysisA', 'analysisB', 'limitA', 'limitB', 'spectrum', 'h', 'hDragging', 'tol', 'per', 'compare'];
  let accuracyKey = null;

  function accuracyInputs(state) {
    const values = state.spectrum?.values;
    const slots = activeSlots(state);
    // asked only once the scheme's properties and limit are in: the server derives the root
    // condition for each, and its mpmath precision is shared between requests (see routes_accuracy)
    const ready = (s) => {
      const an = state[SLOT_KEYS[s].analysis];
      return an?.specKey && an.describeFor === an.specKey && state[SLOT_KEYS[s].limit];
    };
    if (!values?.length || !slots.every(ready)) return null;
    const specs = slots.map((s) => state[SLOT_KEYS[s].analysis].specKey);
    return { values, specs: specs.map((k) => JSON.parse(k)), h: state.h || null, tol: state.tol, per: state.per };
  }

  function refreshAccuracy(delay = ACCURACY_DEBOUNCE_MS) {
    const state = store.get();
    const inp = accuracyInputs(state);
    if (!inp) return null;
    const key = JSON.stringify([inp.specs, inp.h, inp.tol, inp.per]);
    // a region redraw (zoom, pan) changes the analysis but not what is asked here
    if (accuracyKey && accuracyKey.key === key && accuracyKey.spectrum === state.spectrum) return null;
    accuracyKey = { key, spectrum: state.spectrum };
    store.set({ accuracyBusy: true });
    return schedule('accuracy', delay, async (signal, current) => {
      const body = (k) => {
        const b = { scheme: inp.specs[k], eigenvalues: inp.values, tol: inp.tol, per: inp.per };
        if (inp.h) b.h = inp.h;
        if (k === 0 && inp.specs.length > 1) b.other = inp.specs[1];
        return b;
      };
      let reports;
      try {
        reports = [];
        for (let k = 0; k < inp.specs.length; k++) reports.push(await api.accuracy(body(k), signal));
      } catch (err) {
        if (err?.name === 'AbortError' || !current()) throw err;
        serverTrouble(err, ['accuracy', () => refreshAccuracy(0)]);
        accuracyKey = null;   // the same input may be asked again once the trouble is gone
        store.set({ accuracyError: err.info || { message: err.message }, accuracyBusy: false });
        return null;
      }
      if (!current()) return null;
      store.set({ accuracyA: reports[0], accuracyB: reports[1] || null, accuracyError: null, accuracyBusy: false,
        accuracyFor: { tol: inp.tol, per: inp.per, h: inp.h } });
      return reports;
    });
  }

  // A drag supersedes whatever was asked for the h before it.
  function holdAccuracy() {
    const ch = channel('accuracy');
    clearTimeout(ch.timer);
    ch.abort?.abort();
    ch.seq++;
    accuracyKey = null;
    if (store.get().accuracyBusy) store.set({ accuracyBusy: false });
  }

  function watchAccuracy() {
    store.subscribe((state, changed) => {
      if (state.restoring || !ACCURACY_KEYS.some((k) => changed.has(k))) return;
      if (state.hDragging) holdAccuracy();
      else refreshAccuracy();
    });
  }

  // --- share link ----------------------------------------------------------------------
  const SHARED_KEYS = ['schemeA', 'schemeB', 'compare', 'layout', 'spectrumInput', 'spectrum', 'h', 'safety', 'view', 'tol', 'per'];
  function watchShare() {
    store.subscribe((state, changed) => {
      if (!SHARED_KEYS.some((k) => changed.has(k)) || state.restoring) return;
      schedule('share', SHARE_DEBOUNCE_MS, async () => {
        const shared = toShared(store.get());
        let omitted = false;
        if (shared.spectrum.mode === 'values' && shared.spectrum.values.length > MAX_VALUES_IN_LINK) {
          shared.spectrum = { mode: 'values', name: shared.spectrum.name, values: [] };
          omitted = true;
        }
        const code = await encodeShared(shared);
        const url = `${location.origin}${location.pathname}${HASH_PREFIX}${code}`;
        history.replaceState(null, '', url);
        store.set({ share: { url, length: url.length, tooLong: omitted || url.length > LINK_LIMIT, omitted } });
      });
    });
  }

  return {
    attachPlot(p) { plot = p; },
    noteKeystroke,
    analyseSlot,
    limitSlot,
    refreshLimits,
    spectrumFromInput,
    setSpectrum,
    uploadFile,
    cancelJob,
    viewChanged,
    fitView,
    runVerify,
    watchShare,
    watchAccuracy,
    refreshAccuracy,
    notice,
    referenceStep,
    expectInitial(what) { pendingInitial = what; },
  };
}
