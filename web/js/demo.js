// The built-in demo, used when the page opens with no state in the URL. The scenario and its
// numbers are invented for illustration; the page says so.

import { blankScheme } from './scheme-spec.js';

export const DEMO_NOTE = 'Demo (invented data): a cooling-fin conduction model — 1-D heat diffusion along a 5 cm fin, '
  + '60 cells, diffusivity 9.7e-5 m²/s. BDF4 is compared with classical RK4. Replace the eigenvalues with your own.';

export function demoState() {
  return {
    schemeA: blankScheme('bdf4'),
    schemeB: blankScheme('rk4'),
    compare: true,
    layout: 'overlay',
    spectrumInput: {
      mode: 'model',
      model: { kind: 'diffusion-1d', n: 60, params: { L: 0.05, nu: 9.7e-5, bc: 'dirichlet' } },
      text: '',
      file: null,
    },
    h: null,
    safety: 0.9,
    view: null,
    tol: 1e-6,
    per: 'step',
  };
}
