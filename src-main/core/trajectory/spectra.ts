// Vibrational line shapes from time series of the polarisability (Raman) and the dipole (infrared):
// Fourier transforms of time-correlation functions, with a window, zero padding and a selectable
// classical-to-quantum correction.
//
// Raman invariants (standard light-scattering results for an isotropic sample, e.g. D. A. Long,
// "The Raman Effect", Wiley 2002, §5): with ᾱ = tr α / 3 and β = α − ᾱ I,
//   isotropic   C_iso(t)   = ⟨δᾱ(0) δᾱ(t)⟩
//   anisotropic C_aniso(t) = ⟨tr(β(0) β(t))⟩   (γ² = (3/2) tr β² for a static tensor)
//   polarised   I_VV = I_iso + (2/15) I_aniso      ( = ᾱ² + (4/45) γ² )
//   depolarised I_VH = (1/10) I_aniso              ( = (3/45) γ² = γ²/15 )
// Infrared: C_IR(t) = ⟨δM(0)·δM(t)⟩ of the cell dipole.

import { crossCorrelation, fftInPlace, nextPowerOfTwo } from '../numerics/fft.ts';

/** Speed of light in cm/s (exact, SI definition), to turn Hz into wavenumbers (cm⁻¹). */
export const SPEED_OF_LIGHT_CM_PER_S = 2.99792458e10;
/** Planck constant (J s, exact) and Boltzmann constant (J/K, exact), SI 2019 definitions (CODATA 2018). */
export const PLANCK_J_S = 6.62607015e-34;
export const BOLTZMANN_J_PER_K = 1.380649e-23;

export type WindowKind = 'none' | 'hann' | 'gaussian';

/**
 * How a classical correlation spectrum is turned into an estimate of the quantum one.
 * - none: the classical line shape as computed.
 * - harmonic: multiply by βħω / (1 − e^{−βħω}) (exact for harmonic systems, linear operators).
 * - schofield: multiply by e^{βħω/2} (P. Schofield, Phys. Rev. Lett. 4, 239 (1960)).
 */
export type QuantumCorrection = 'none' | 'harmonic' | 'schofield';

export interface SpectrumOptions {
  /** Time between frames (fs). */
  timeStepFs: number;
  /** Longest correlation time used (fs); default: a quarter of the series. */
  maxCorrelationFs?: number;
  window?: WindowKind;
  /** Zero padding factor of the windowed correlation function before its transform (≥ 1). */
  padding?: number;
  correction?: QuantumCorrection;
  /** Temperature (K) for the quantum correction. */
  temperatureK?: number;
}

export interface Spectrum {
  /** Wavenumbers (cm⁻¹), from 0 to the Nyquist limit. */
  wavenumber: Float64Array;
  intensity: Float64Array;
  /** What was done, in words, for file headers and figure captions. */
  note: string;
}

function windowValue(kind: WindowKind, i: number, n: number): number {
  if (kind === 'none') return 1;
  const x = i / n; // one-sided window over lags 0…n−1, 1 at lag 0
  if (kind === 'hann') return 0.5 * (1 + Math.cos(Math.PI * x));
  return Math.exp(-0.5 * (x / 0.4) ** 2);
}

function correctionFactor(c: QuantumCorrection, wavenumber: number, temperatureK: number): number {
  if (c === 'none' || wavenumber === 0) return 1;
  // βħω = h c ν̃ / (k T)
  const x = (PLANCK_J_S * SPEED_OF_LIGHT_CM_PER_S * wavenumber) / (BOLTZMANN_J_PER_K * temperatureK);
  if (c === 'harmonic') return x / -Math.expm1(-x);
  return Math.exp(x / 2);
}

/**
 * Cosine transform of a (sum of) even correlation function(s) C(τ), τ = 0…L−1, windowed and zero-padded:
 * I(ν̃) = Δt [C(0) + 2 Σ_τ>0 w(τ) C(τ) cos(2π ν τ Δt)], returned for ν̃ ≥ 0.
 */
export function correlationSpectrum(corr: ArrayLike<number>, opts: SpectrumOptions): Spectrum {
  const L = corr.length;
  const window = opts.window ?? 'hann';
  const padding = Math.max(1, opts.padding ?? 4);
  const correction = opts.correction ?? 'none';
  const temperatureK = opts.temperatureK ?? 300;
  if (!(opts.timeStepFs > 0)) throw new RangeError('spectrum: the time step must be positive (fs)');
  if (correction !== 'none' && !(temperatureK > 0)) throw new RangeError('spectrum: a quantum correction needs a positive temperature');
  const m = nextPowerOfTwo(2 * L * padding);
  const re = new Float64Array(m);
  const im = new Float64Array(m);
  for (let t = 0; t < L; t++) {
    const v = corr[t] * windowValue(window, t, L);
    re[t] = v;
    if (t > 0) re[m - t] = v; // even extension
  }
  fftInPlace(re, im, -1);
  const dtS = opts.timeStepFs * 1e-15;
  const half = m / 2;
  const wavenumber = new Float64Array(half + 1);
  const intensity = new Float64Array(half + 1);
  for (let k = 0; k <= half; k++) {
    const nu = k / (m * dtS);
    wavenumber[k] = nu / SPEED_OF_LIGHT_CM_PER_S;
    intensity[k] = re[k] * opts.timeStepFs * correctionFactor(correction, wavenumber[k], temperatureK);
  }
  const note =
    `Fourier transform of the time-correlation function: time step ${opts.timeStepFs} fs, ` +
    `${L} lags (${(L * opts.timeStepFs).toFixed(1)} fs), ${window} window, zero padding to ${m} points, ` +
    `quantum correction: ${correction}${correction !== 'none' ? ` at ${temperatureK} K` : ''}.`;
  return { wavenumber, intensity, note };
}

function lagsFor(n: number, opts: SpectrumOptions): number {
  const want = opts.maxCorrelationFs !== undefined ? Math.round(opts.maxCorrelationFs / opts.timeStepFs) + 1 : Math.floor(n / 4);
  return Math.max(2, Math.min(n - 1, want));
}

function centred(xs: ArrayLike<number>): Float64Array {
  let s = 0;
  for (let i = 0; i < xs.length; i++) s += xs[i];
  const m = s / xs.length;
  const out = new Float64Array(xs.length);
  for (let i = 0; i < xs.length; i++) out[i] = xs[i] - m;
  return out;
}

export interface RamanSpectra {
  isotropic: Spectrum;
  anisotropic: Spectrum;
  polarised: Spectrum;
  depolarised: Spectrum;
}

/**
 * Raman line shapes from a polarisability trajectory: `tensors` holds 9 numbers (row-major, symmetric) per
 * frame, equally spaced in time by opts.timeStepFs.
 */
export function ramanSpectra(tensors: Float64Array, opts: SpectrumOptions): RamanSpectra {
  const n = Math.floor(tensors.length / 9);
  if (n * 9 !== tensors.length) throw new RangeError('ramanSpectra: tensors must hold 9 numbers per frame');
  if (n < 8) throw new RangeError(`ramanSpectra: need at least 8 frames, got ${n}`);
  const lags = lagsFor(n, opts) - 1;
  const iso = new Float64Array(n);
  for (let f = 0; f < n; f++) iso[f] = (tensors[9 * f] + tensors[9 * f + 4] + tensors[9 * f + 8]) / 3;
  const cIso = crossCorrelation(centred(iso), centred(iso), lags);
  // tr(β(0)β(t)) = Σ_ij β_ij(0) β_ij(t) over the 9 components of the traceless part (centred: only the
  // fluctuation contributes at ν > 0, and centring removes the static anisotropy's zero-frequency line).
  const cAniso = new Float64Array(lags + 1);
  for (let i = 0; i < 9; i++) {
    const comp = new Float64Array(n);
    const diag = i === 0 || i === 4 || i === 8;
    for (let f = 0; f < n; f++) comp[f] = tensors[9 * f + i] - (diag ? iso[f] : 0);
    const c = crossCorrelation(centred(comp), centred(comp), lags);
    for (let t = 0; t <= lags; t++) cAniso[t] += c[t];
  }
  const cVV = new Float64Array(lags + 1);
  const cVH = new Float64Array(lags + 1);
  for (let t = 0; t <= lags; t++) {
    cVV[t] = cIso[t] + (2 / 15) * cAniso[t];
    cVH[t] = (1 / 10) * cAniso[t];
  }
  return {
    isotropic: correlationSpectrum(cIso, opts),
    anisotropic: correlationSpectrum(cAniso, opts),
    polarised: correlationSpectrum(cVV, opts),
    depolarised: correlationSpectrum(cVH, opts),
  };
}

/** Infrared line shape from a dipole trajectory (3 numbers per frame). */
export function infraredSpectrum(dipoles: Float64Array, opts: SpectrumOptions): Spectrum {
  const n = Math.floor(dipoles.length / 3);
  if (n * 3 !== dipoles.length) throw new RangeError('infraredSpectrum: dipoles must hold 3 numbers per frame');
  if (n < 8) throw new RangeError(`infraredSpectrum: need at least 8 frames, got ${n}`);
  const lags = lagsFor(n, opts) - 1;
  const c = new Float64Array(lags + 1);
  for (let i = 0; i < 3; i++) {
    const comp = new Float64Array(n);
    for (let f = 0; f < n; f++) comp[f] = dipoles[3 * f + i];
    const ci = crossCorrelation(centred(comp), centred(comp), lags);
    for (let t = 0; t <= lags; t++) c[t] += ci[t];
  }
  return correlationSpectrum(c, opts);
}
