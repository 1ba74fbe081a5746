// A small state store: shallow top-level merges, subscribers told which keys changed.

export function createStore(initial) {
  let state = { ...initial };
  const subscribers = new Set();
  return {
    get: () => state,
    set(patch) {
      const changed = [];
      for (const [k, v] of Object.entries(patch)) {
        if (state[k] !== v) changed.push(k);
      }
      if (!changed.length) return;
      state = { ...state, ...patch };
      for (const fn of subscribers) fn(state, new Set(changed));
    },
    subscribe(fn) {
      subscribers.add(fn);
      return () => subscribers.delete(fn);
    },
  };
}
