/** Number formatting and the dossier's own wording (section intros, the caution). */

/** A number for people: `digits` significant figures, exponent form outside 1e-3 … 1e5. */
export function fmt(v: unknown, digits = 3): string {
  if (v === null || v === undefined) return '—';
  if (typeof v !== 'number') return String(v);
  if (Number.isNaN(v)) return 'NaN';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : '−∞';
  if (v === 0) return '0';
  const a = Math.abs(v);
  let s: string;
  if (a >= 1e5 || a < 1e-3) {
    const [m, e] = v.toExponential(digits - 1).split('e');
    s = `${Number(m)}×10^${Number(e)}`;
    s = s.replace(/\^(-?\d+)$/, (_, p: string) => superscript(p));
  } else {
    s = String(Number(v.toPrecision(digits)));
  }
  return s.replace(/^-/, '−');
}

const SUP: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };
function superscript(p: string): string { return Array.from(p, (c) => SUP[c] ?? c).join(''); }

export function pct(v: number | null | undefined): string {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '—';
  return `${Math.round(v * 100)} %`;
}

export const CAUTION_TITLE = 'Read this before acting on the findings';
export const CAUTION = 'Everything in this dossier is a statistical hypothesis about a model of the system, inferred from the recorded experiments. ' +
  'None of it is a measurement of the system itself. A qualified domain expert must confirm these findings before they are used for any design or safety decision.';

export const INTRO = {
  hypotheses: 'What the evidence suggests about the hidden operator, most probable first. Each statement names the analyses it rests on; the confidence is a probability the analyses assign, not a guarantee.',
  analyses: 'One section per question asked of the fitted kernel. Each gives its verdict, the number behind it set against the noise floor that the fit itself estimated, a figure, and what the test measures.',
  quality: 'How much the data can support: the experiments used, how well the fitted kernel reproduces held-out responses, the noise level, which part of the kernel the forcings determine, and whether the responses behave linearly.',
  kernel: 'The fitted Green\'s function itself, with its homogeneous part. Large kernels are thinned for display; the numbers behind every figure can be downloaded from this page.',
  audit: 'What went into this dossier and how to make it again: the input files with their SHA-256 hashes, the tool and its options, the seed, the times and the platform.',
};

/** Headings of the analysis sections, in reading order (keys as in findings.json). */
export const ANALYSES: { key: string; title: string; fallback: string }[] = [
  { key: 'self_adjoint', title: 'Self-adjointness', fallback: 'Compares the kernel with its transpose, G(x, s) against G(s, x). A self-adjoint operator (pure diffusion, for example) gives a symmetric kernel; transport or other one-way effects break the symmetry.' },
  { key: 'transport', title: 'Transport direction', fallback: 'Looks at which side of the diagonal the asymmetric part of the kernel lives on, to tell whether the response is carried toward increasing or decreasing position.' },
  { key: 'translation_invariant', title: 'Uniformity of the medium', fallback: 'Asks whether the kernel depends only on the distance x − s away from the ends, as it does when the coefficients of the operator are the same everywhere.' },
  { key: 'order', title: 'Differential order', fallback: 'Reads the order of the operator from how fast the singular values of the kernel fall off: about k^(−order) in one dimension.' },
  { key: 'locality', title: 'Locality', fallback: 'Asks whether the operator behind the kernel acts only on a neighbourhood of each point (a differential operator) or couples distant points directly.' },
  { key: 'oscillation', title: 'Oscillation', fallback: 'Looks for waves in the kernel away from the source: a wavenumber shows up as sines and cosines in the response to a point source.' },
  { key: 'screening', title: 'Screening', fallback: 'Looks for exponential decay of the response away from the source, the mark of a reaction or loss term, and its decay length.' },
  { key: 'singularities', title: 'Singular points', fallback: 'Locates points other than the source where the kernel or the homogeneous part is singular or nearly so, from the poles of rational approximations.' },
  { key: 'interfaces', title: 'Interfaces', fallback: 'Locates positions where the character of the physics changes, from local features of the kernel along the domain.' },
  { key: 'regions', title: 'Regions', fallback: 'Splits the domain into regions of one character and states the coefficients found in each.' },
  { key: 'operator', title: 'Operator and coefficients', fallback: 'Assembles the findings into an explicit operator with coefficient profiles and their bands.' },
  { key: 'coupling', title: 'Coupling between components', fallback: 'For systems: how strongly each input component drives each output component.' },
  { key: 'linearity', title: 'Linearity', fallback: 'Checks whether responses scale with the forcing as a linear system requires.' },
];
