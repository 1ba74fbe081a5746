// Number and text formatting for display only (pure).

export function fmt(x, digits = 6) {
  if (x === null || x === undefined) return '—';
  if (typeof x !== 'number' || !Number.isFinite(x)) return String(x);
  if (x === 0) return '0';
  const a = Math.abs(x);
  if (a >= 1e-3 && a < 1e6) return String(Number(x.toPrecision(digits)));
  const [m, e] = x.toExponential(digits - 1).split('e');
  return `${String(Number(m))}e${Number(e)}`;
}

export function fmtComplex(pair, digits = 6) {
  if (!pair) return '—';
  const [re, im] = pair;
  if (!im) return fmt(re, digits);
  const sign = im < 0 ? '−' : '+';
  return `${fmt(re, digits)} ${sign} ${fmt(Math.abs(im), digits)}i`;
}

export function fmtInterval(iv, digits = 6) {
  if (!iv) return '—';
  const [lo, hi] = iv;
  const a = lo === null ? '−∞' : fmt(lo, digits);
  const b = hi === null ? '+∞' : fmt(hi, digits);
  return `[${a}, ${b}]`;
}

export function fmtDegrees(d) {
  if (d === null || d === undefined) return '—';
  return `${fmt(d, 5)}°`;
}

export function plural(n, word, many = `${word}s`) {
  return `${n} ${n === 1 ? word : many}`;
}

// One element with children from a tiny hyperscript; text is always set as text, never HTML.
export function el(tag, attrs = {}, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs || {})) {
    if (v === null || v === undefined || v === false) continue;
    if (k === 'class') node.className = v;
    else if (k === 'dataset') Object.assign(node.dataset, v);
    else if (k.startsWith('on') && typeof v === 'function') node.addEventListener(k.slice(2), v);
    else if (k === 'text') node.textContent = v;
    else node.setAttribute(k, v === true ? '' : v);
  }
  for (const c of children.flat()) {
    if (c === null || c === undefined || c === false) continue;
    node.append(c instanceof Node ? c : document.createTextNode(String(c)));
  }
  return node;
}
