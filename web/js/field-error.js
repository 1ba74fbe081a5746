// Shows a server error next to the field it names; the field's text is never touched.

import { el } from './format.js';

// Where in the editor an error field belongs: 'scheme.rho' and 'rho' both go to rho.
export function fieldKey(field) {
  if (!field) return 'general';
  const f = String(field).replace(/^scheme\./, '');
  const m = f.match(/^(rho|sigma|alpha|beta|tableau|stability|predictor|corrector|m|mode|stages|name)\b/);
  if (!m) return 'general';
  return { name: 'general', mode: 'pc', m: 'pc', predictor: 'pc', corrector: 'pc', stages: 'stability' }[m[1]] || m[1];
}

// Index of a list entry named in the field or message: alpha[2] / "entry 3" -> 2.
export function entryIndex(info) {
  const f = String(info?.field || '');
  let m = f.match(/\[(\d+)\]/);
  if (m) return Number(m[1]);
  m = String(info?.message || '').match(/entry (\d+)/);
  return m ? Number(m[1]) - 1 : null;
}

// Row/column of a tableau entry named in the message: "A[2][1]" (1-based as the core says).
export function tableauCell(info) {
  const text = `${info?.field || ''} ${info?.message || ''}`;
  let m = text.match(/\bA\[(\d+)\]\[(\d+)\]/);
  if (m) return { part: 'A', i: Number(m[1]), j: Number(m[2]) };
  m = text.match(/\b([bc])\[(\d+)\]/);
  if (m) return { part: m[1], i: Number(m[2]) };
  return null;
}

export function errorText(info) {
  if (!info) return '';
  let where = '';
  if (info.line && info.column && info.line > 1) where = ` (line ${info.line}, column ${info.column})`;
  else if (info.column) where = ` (column ${info.column})`;
  else if (info.position !== null && info.position !== undefined) where = ` (character ${info.position + 1})`;
  const expected = info.expected ? ` — expected ${info.expected}` : '';
  const field = info.field && info.field !== 'general' ? `${info.field}: ` : '';
  return `${field}${info.message}${where}${expected}`;
}

// A message box with, for one-line text, the text and a caret under the spot.
export function renderFieldError(box, info, text) {
  box.replaceChildren();
  box.hidden = !info;
  if (!info) return;
  box.append(el('span', { class: 'field-error__message', text: errorText(info) }));
  const pos = info.position;
  if (typeof text === 'string' && text.length <= 160 && !text.includes('\n') && Number.isInteger(pos) && pos >= 0 && pos <= text.length) {
    box.append(el('pre', { class: 'field-error__where', 'aria-hidden': 'true' },
      el('span', { text: text || ' ' }), '\n', el('span', { class: 'field-error__caret', text: `${' '.repeat(pos)}^` })));
  }
}
