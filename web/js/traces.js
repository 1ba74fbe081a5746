// Pure functions: analysis JSON -> plotly traces and layout. No stability math here: regions,
// intervals, angles and per-eigenvalue limits all come from the server; the page only scales
// the eigenvalues by h (z = h * lambda) to place them, and flags point j as outside when
// h > per_eigenvalue[j] (the server's limit of that eigenvalue).

export const STYLES = {
  a: { key: 'a', tag: 'A', line: '#17695f', fill: 'rgba(38,140,126,0.22)', swatch: '#5fb3a7', dash: 'solid', marker: '#17695f' },
  b: { key: 'b', tag: 'B', line: '#b4561a', fill: 'rgba(226,140,58,0.26)', swatch: '#eba468', dash: 'dash', marker: '#b4561a' },
};
export const POINT_COLOR = '#25303b';
export const OUTSIDE_COLOR = '#c42b2b';
export const UIREVISION = 'stepfence-view';

// True where the step h is beyond that eigenvalue's own limit (null limit: no bound).
export function outsideMask(perEigenvalue, h) {
  if (!perEigenvalue || !(h > 0)) return [];
  return perEigenvalue.map((lim) => lim !== null && lim !== undefined && h > lim);
}

export function countOutside(mask) {
  let n = 0;
  for (const m of mask) if (m) n++;
  return n;
}

export function scaled(values, h) {
  const x = new Array(values.length);
  const y = new Array(values.length);
  for (let i = 0; i < values.length; i++) {
    x[i] = h * values[i][0];
    y[i] = h * values[i][1];
  }
  return { x, y };
}

// Expand a view box so one unit on x has the same length on screen as one unit on y.
export function fitAspect(view, aspect) {
  let [x0, x1] = view.xlim;
  let [y0, y1] = view.ylim;
  const w = x1 - x0;
  const hgt = y1 - y0;
  if (!(aspect > 0) || !(w > 0) || !(hgt > 0)) return view;
  if (hgt / w < aspect) {
    const need = w * aspect;
    const c = (y0 + y1) / 2;
    y0 = c - need / 2;
    y1 = c + need / 2;
  } else {
    const need = hgt / aspect;
    const c = (x0 + x1) / 2;
    x0 = c - need / 2;
    x1 = c + need / 2;
  }
  return { xlim: [x0, x1], ylim: [y0, y1] };
}

export function unionBox(boxes) {
  const ok = boxes.filter(Boolean);
  if (!ok.length) return null;
  return {
    xlim: [Math.min(...ok.map((b) => b.xlim[0])), Math.max(...ok.map((b) => b.xlim[1]))],
    ylim: [Math.min(...ok.map((b) => b.ylim[0])), Math.max(...ok.map((b) => b.ylim[1]))],
  };
}

export function pointsBox(values, h, pad = 0.08) {
  if (!values?.length || !(h > 0)) return null;
  let x0 = Infinity; let x1 = -Infinity; let y0 = Infinity; let y1 = -Infinity;
  for (const [re, im] of values) {
    x0 = Math.min(x0, h * re); x1 = Math.max(x1, h * re);
    y0 = Math.min(y0, h * im); y1 = Math.max(y1, h * im);
  }
  const span = Math.max(x1 - x0, y1 - y0, 1e-12);
  return { xlim: [x0 - pad * span, x1 + pad * span], ylim: [y0 - pad * span, y1 + pad * span] };
}

function axisIds(side, slotIndex) {
  if (side && slotIndex === 1) return { xaxis: 'x2', yaxis: 'y2' };
  return { xaxis: 'x', yaxis: 'y' };
}

export function regionTraces(region, style, name, axes) {
  if (!region) return [];
  const out = [{
    type: 'heatmap', x: region.raster.x, y: region.raster.y, z: region.raster.stable,
    zmin: 0, zmax: 1, showscale: false, hoverinfo: 'skip', zsmooth: false,
    colorscale: [[0, 'rgba(0,0,0,0)'], [1, style.fill]], name: `region ${style.tag}`,
    meta: { role: 'region', slot: style.key }, ...axes,
  }];
  const x = [];
  const y = [];
  for (const br of region.branches) {
    if (x.length) { x.push(null); y.push(null); }
    for (let i = 0; i < br.x.length; i++) { x.push(br.x[i]); y.push(br.y[i]); }
  }
  out.push({
    type: 'scatter', mode: 'lines', x, y, name: `boundary locus ${style.tag}: ${name}`,
    line: { color: style.line, width: 1.6, dash: style.dash }, hoverinfo: 'skip',
    meta: { role: 'locus', slot: style.key }, connectgaps: false, ...axes,
  });
  // legend swatch for the filled region (heatmaps carry no legend entry)
  out.push({
    type: 'scatter', mode: 'markers', x: [null], y: [null], name: `stable region ${style.tag}: ${name}`,
    marker: { symbol: 'square', size: 13, color: style.fill, line: { color: style.line, width: 1 } },
    hoverinfo: 'skip', meta: { role: 'swatch', slot: style.key }, ...axes,
  });
  return out;
}

export function intervalTraces(describe, view, style, axes) {
  if (!describe || !view) return [];
  const out = [];
  const [rlo, rhi] = describe.real_interval || [0, 0];
  const a = rlo === null ? view.xlim[0] : Math.max(rlo, view.xlim[0]);
  const b = rhi === null ? view.xlim[1] : Math.min(rhi, view.xlim[1]);
  const wide = style.key === 'a' ? 6 : 3;
  if (b > a) {
    out.push({
      type: 'scatter', mode: 'lines', x: [a, b], y: [0, 0], name: `real interval ${style.tag}`,
      line: { color: style.line, width: wide }, opacity: 0.55, hoverinfo: 'name',
      meta: { role: 'real-interval', slot: style.key }, showlegend: false, ...axes,
    });
  }
  const [ilo, ihi] = describe.imag_interval || [0, 0];
  const c = ilo === null ? view.ylim[0] : Math.max(ilo, view.ylim[0]);
  const d = ihi === null ? view.ylim[1] : Math.min(ihi, view.ylim[1]);
  if (d > c) {
    out.push({
      type: 'scatter', mode: 'lines', x: [0, 0], y: [c, d], name: `imaginary interval ${style.tag}`,
      line: { color: style.line, width: wide }, opacity: 0.75, hoverinfo: 'name',
      meta: { role: 'imag-interval', slot: style.key }, showlegend: false, ...axes,
    });
  }
  return out;
}

export function wedgeTraces(describe, view, style, axes) {
  const deg = describe?.a_alpha_deg;
  if (deg === null || deg === undefined || !view || deg <= 0) return [];
  const r = 4 * Math.max(Math.abs(view.xlim[0]), Math.abs(view.xlim[1]), Math.abs(view.ylim[0]), Math.abs(view.ylim[1]));
  const t = (deg * Math.PI) / 180;
  const ex = -r * Math.cos(t);
  const ey = r * Math.sin(t);
  return [{
    type: 'scatter', mode: 'lines', x: [ex, 0, ex], y: [ey, 0, -ey],
    name: `A(α) wedge ${style.tag}: α = ${deg.toFixed(2)}°`,
    line: { color: style.line, width: 1.2, dash: 'dot' }, hoverinfo: 'name',
    meta: { role: 'wedge', slot: style.key }, ...axes,
  }];
}

// The h*lambda points, coloured by whether they sit outside each scheme's region.
export function pointTraces(values, h, slots, axes, big) {
  if (!values?.length || !(h > 0)) return [];
  const { x, y } = scaled(values, h);
  const masks = slots.map((s) => outsideMask(s.limit?.per_eigenvalue, h));
  const groups = new Map();
  for (let i = 0; i < values.length; i++) {
    const out = slots.filter((_, k) => masks[k][i]).map((s) => s.style.tag);
    const key = out.join('+');
    if (!groups.has(key)) groups.set(key, []);
    groups.get(key).push(i);
  }
  const type = big ? 'scattergl' : 'scatter';
  const traces = [];
  const order = [...groups.keys()].sort((p, q) => p.length - q.length);
  for (const key of order) {
    const idx = groups.get(key);
    const outside = key !== '';
    const names = slots.map((s) => s.name);
    const label = !outside
      ? `h·λ inside ${slots.length > 1 ? 'both regions' : 'the region'} (${idx.length})`
      : `h·λ outside ${key.split('+').map((tag) => names[tag === 'A' ? 0 : 1] ?? tag).join(' and ')} (${idx.length})`;
    traces.push({
      type, mode: 'markers', x: idx.map((i) => x[i]), y: idx.map((i) => y[i]), name: label,
      customdata: idx.map((i) => [i, values[i][0], values[i][1], ...slots.map((s) => s.limit?.per_eigenvalue?.[i] ?? null)]),
      hovertemplate: `λ<sub>%{customdata[0]}</sub> = %{customdata[1]:.6g} %{customdata[2]:+.6g}i<br>h·λ = %{x:.5g} %{y:+.5g}i`
        + slots.map((s, k) => `<br>h_max(λ) ${s.style.tag}: %{customdata[${3 + k}]:.6g}`).join('') + '<extra></extra>',
      marker: outside
        ? { symbol: 'x-thin', size: big ? 7 : 10, color: OUTSIDE_COLOR, line: { color: OUTSIDE_COLOR, width: 2 } }
        : { symbol: 'circle', size: big ? 4 : 7, color: POINT_COLOR, line: { color: '#ffffff', width: big ? 0 : 1 } },
      meta: { role: outside ? 'points-outside' : 'points-inside', outside: key, count: idx.length }, ...axes,
    });
  }
  return traces;
}

export function bindingTraces(values, h, slot, axes) {
  const i = slot.limit?.binding_index;
  if (i === null || i === undefined || !values?.[i] || !(h > 0)) return [];
  const outside = slot.limit.h_max !== null && h > slot.limit.h_max;
  return [{
    type: 'scatter', mode: 'markers+text', x: [h * values[i][0]], y: [h * values[i][1]],
    text: [outside ? `binds ${slot.style.tag} — outside` : `binds ${slot.style.tag}`],
    textposition: slot.style.key === 'a' ? 'top center' : 'bottom center',
    textfont: { color: outside ? OUTSIDE_COLOR : slot.style.line, size: 12 },
    name: `binding eigenvalue ${slot.style.tag}`,
    marker: { symbol: 'circle-open', size: 20, color: outside ? OUTSIDE_COLOR : slot.style.line, line: { width: 2.5 } },
    hoverinfo: 'skip', meta: { role: 'binding', slot: slot.style.key, outside }, ...axes,
  }];
}

function axis(title, range, extra = {}) {
  return {
    title: { text: title, font: { size: 12, color: '#4a5563' } }, range, autorange: false,
    zeroline: true, zerolinecolor: '#7d858f', zerolinewidth: 1, gridcolor: '#ebe6db',
    linecolor: '#cfc8ba', mirror: true, ticks: 'outside', tickcolor: '#cfc8ba',
    tickfont: { size: 11, color: '#4a5563' }, ...extra,
  };
}

// The whole figure. slots: [{style, name, analysis:{describe, region}, limit}], A first.
export function buildFigure({ slots, values, h, view, layout, uirevision }) {
  const side = layout === 'side' && slots.length > 1;
  const big = (values?.length || 0) > 4000;
  const data = [];
  const shown = view || slots[0]?.analysis?.region && { xlim: slots[0].analysis.region.xlim, ylim: slots[0].analysis.region.ylim };
  slots.forEach((s, k) => {
    const axes = axisIds(side, k);
    if (s.analysis) {
      data.push(...regionTraces(s.analysis.region, s.style, s.name, axes));
      data.push(...intervalTraces(s.analysis.describe, shown, s.style, axes));
      data.push(...wedgeTraces(s.analysis.describe, shown, s.style, axes));
    }
  });
  if (side) {
    slots.forEach((s, k) => {
      const axes = axisIds(true, k);
      data.push(...pointTraces(values, h, [s], axes, big).map((t) => ({ ...t, showlegend: k === 0 || t.meta.role !== 'points-inside', legendgroup: t.meta.role })));
      data.push(...bindingTraces(values, h, s, axes));
    });
  } else {
    const axes = axisIds(false, 0);
    data.push(...pointTraces(values, h, slots, axes, big));
    for (const s of slots) data.push(...bindingTraces(values, h, s, axes));
  }
  const lay = {
    uirevision, dragmode: 'pan', hovermode: 'closest', paper_bgcolor: '#ffffff', plot_bgcolor: '#fcfbf8',
    font: { family: 'system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif', size: 12, color: '#1f2933' },
    // fixed margins: a legend that wraps onto another line must not shrink the plot (the view
    // would change with it)
    margin: { l: 58, r: 16, t: 12, b: 112, autoexpand: false },
    showlegend: true,
    legend: { orientation: 'h', x: 0, y: -0.12, yanchor: 'top', font: { size: 11 }, bgcolor: 'rgba(255,255,255,0)' },
    xaxis: axis('Re(h·λ)', shown?.xlim, side ? { domain: [0, 0.485] } : {}),
    yaxis: axis('Im(h·λ)', shown?.ylim, { scaleanchor: 'x', scaleratio: 1 }),
    annotations: [],
  };
  if (side) {
    lay.xaxis2 = axis('Re(h·λ)', shown?.xlim, { domain: [0.515, 1], matches: 'x' });
    lay.yaxis2 = axis('', shown?.ylim, { anchor: 'x2', scaleanchor: 'x2', scaleratio: 1, matches: 'y' });
    slots.forEach((s, k) => lay.annotations.push({
      xref: 'paper', yref: 'paper', x: k === 0 ? 0.005 : 0.52, y: 0.995, xanchor: 'left', yanchor: 'top',
      text: `<b>${s.style.tag}</b> ${s.name}`, showarrow: false, font: { color: s.style.line, size: 12 },
      bgcolor: 'rgba(255,255,255,0.8)',
    }));
  }
  return { data, layout: lay };
}

// CSV of the boundary-locus points of every scheme shown.
export function boundaryCsv(slots) {
  const rows = ['scheme,branch,re_z,im_z'];
  for (const s of slots) {
    const region = s.analysis?.region;
    if (!region) continue;
    region.branches.forEach((br, k) => {
      for (let i = 0; i < br.x.length; i++) {
        if (br.x[i] === null || br.y[i] === null) continue;
        rows.push(`${csvText(s.name)},${k},${br.x[i]},${br.y[i]}`);
      }
    });
  }
  return rows.join('\n') + '\n';
}

// CSV of each eigenvalue and its own step limit under each scheme (empty = no bound).
export function perEigenvalueCsv(values, slots, h) {
  const head = ['index', 're_lambda', 'im_lambda', ...slots.flatMap((s) => [`h_max_${s.style.tag}`, `outside_${s.style.tag}_at_h`])];
  const rows = [head.join(',')];
  const masks = slots.map((s) => outsideMask(s.limit?.per_eigenvalue, h));
  (values || []).forEach((v, i) => {
    const cells = [i, v[0], v[1]];
    slots.forEach((s, k) => {
      const lim = s.limit?.per_eigenvalue?.[i];
      cells.push(lim === null || lim === undefined ? '' : lim, masks[k][i] ? 1 : 0);
    });
    rows.push(cells.join(','));
  });
  return rows.join('\n') + '\n';
}

function csvText(s) {
  const t = String(s);
  return /[",\n]/.test(t) ? `"${t.replace(/"/g, '""')}"` : t;
}

// Norm history traces for the verification plot (log y axis).
export function verifyTraces(results) {
  return results.map(({ style, name, result }) => ({
    type: 'scatter', mode: 'lines', name: `${style.tag}: ${name}`,
    x: result.norms.map((_, i) => i), y: result.norms.map((v) => (v === null || v <= 0 ? null : v)),
    line: { color: style.line, width: 2, dash: style.dash },
    hovertemplate: 'step %{x}: ‖u‖/‖u₀‖ = %{y:.4g}<extra></extra>',
  }));
}

// Accuracy beside stability: amplitude error |zeta|/|e^z| - 1 (top) and phase error (bottom)
// against h*omega on the imaginary axis, one report per scheme (A solid, B dashed), and a
// marker at h * max|Im lambda|. Values the server could not determine arrive as null: gaps.
// items: [{style, name, axis: report.imaginary_axis}], A first.
export function accuracyFigure({ items, marker, uirevision }) {
  const data = [];
  for (const { style, name, axis: ax } of items) {
    if (!ax) continue;
    const common = { type: 'scatter', mode: 'lines', x: ax.omega_h, legendgroup: style.key, line: { color: style.line, width: 2, dash: style.dash } };
    data.push({ ...common, y: ax.amplitude_error, name: `${style.tag}: ${name}`, xaxis: 'x', yaxis: 'y',
      hovertemplate: `${style.tag} · h·ω = %{x:.4g}<br>|ζ|/|e^z| − 1 = %{y:.4g}<extra></extra>`, meta: { role: 'amplitude', slot: style.key } });
    data.push({ ...common, y: ax.phase_error, name: `${style.tag}: ${name}`, showlegend: false, xaxis: 'x', yaxis: 'y2',
      hovertemplate: `${style.tag} · h·ω = %{x:.4g}<br>phase error = %{y:.4g} rad/step<extra></extra>`, meta: { role: 'phase', slot: style.key } });
  }
  const grid = { gridcolor: '#ebe6db', zeroline: true, zerolinecolor: '#7d858f', zerolinewidth: 1, linecolor: '#cfc8ba', mirror: true,
    ticks: 'outside', tickcolor: '#cfc8ba', tickfont: { size: 11, color: '#4a5563' }, exponentformat: 'power' };
  const title = (text) => ({ text, font: { size: 12, color: '#4a5563' } });
  const shapes = [];
  const annotations = [];
  if (marker !== null && marker !== undefined && Number.isFinite(marker)) {
    shapes.push({ type: 'line', xref: 'x', yref: 'paper', x0: marker, x1: marker, y0: 0, y1: 1, line: { color: POINT_COLOR, width: 1.4, dash: 'dot' } });
    annotations.push({ xref: 'x', yref: 'paper', x: marker, y: 1, yanchor: 'bottom', xanchor: 'left', showarrow: false,
      text: 'h·max|Im λ|', font: { size: 11, color: POINT_COLOR } });
  }
  return {
    data,
    layout: {
      uirevision, hovermode: 'closest', paper_bgcolor: '#ffffff', plot_bgcolor: '#fcfbf8', dragmode: 'zoom',
      font: { family: 'system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif', size: 12, color: '#1f2933' },
      margin: { l: 66, r: 16, t: 20, b: 44 }, showlegend: true,
      legend: { orientation: 'h', x: 0, y: 1.02, yanchor: 'bottom', xanchor: 'left', font: { size: 11 }, bgcolor: 'rgba(255,255,255,0)' },
      xaxis: { ...grid, anchor: 'y2', title: title('h·ω  (z = i h·ω on the imaginary axis)') },
      yaxis: { ...grid, domain: [0.55, 1], title: title('|ζ|/|e^z| − 1') },
      yaxis2: { ...grid, domain: [0, 0.45], anchor: 'x', title: title('phase error (rad/step)') },
      shapes, annotations,
    },
  };
}

// The largest |Im lambda| of a spectrum [[re, im], ...] (0 for a real one).
export function largestImag(values) {
  let m = 0;
  for (const v of values || []) m = Math.max(m, Math.abs(v[1]));
  return m;
}
