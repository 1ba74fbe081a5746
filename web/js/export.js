// Downloads built in the page (blob URLs, no network): CSV, JSON, and the figure as PNG/SVG.

export function downloadText(text, filename, type) {
  const url = URL.createObjectURL(new Blob([text], { type }));
  const a = document.createElement('a');
  a.href = url;
  a.download = filename;
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10000);
}

export function downloadFigure(gd, format) {
  const w = Math.max(640, gd.clientWidth);
  const h = Math.max(420, gd.clientHeight);
  return window.Plotly.downloadImage(gd, { format, filename: 'stepfence-region', width: w, height: h, scale: format === 'png' ? 2 : 1 });
}

export function stamp() {
  return new Date().toISOString().replace(/[:]/g, '-').replace(/\..*$/, '');
}
