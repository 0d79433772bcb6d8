import { describe, expect, it } from 'vitest';
import { autocorrelation, fftInPlace } from '../../../src-main/core/numerics/fft.ts';
import { correlationSpectrum, infraredSpectrum, ramanSpectra, SPEED_OF_LIGHT_CM_PER_S } from '../../../src-main/core/trajectory/spectra.ts';

const dtFs = 1;
/** Angular frequency (rad/fs) of a line at ν̃ cm⁻¹: ω = 2π c ν̃. */
const omega = (wn: number) => 2 * Math.PI * SPEED_OF_LIGHT_CM_PER_S * wn * 1e-15;

function peakWavenumber(s: { wavenumber: Float64Array; intensity: Float64Array }, lo = 1): number {
  let best = -Infinity;
  let at = 0;
  for (let k = 0; k < s.intensity.length; k++) {
    if (s.wavenumber[k] < lo) continue;
    if (s.intensity[k] > best) {
      best = s.intensity[k];
      at = s.wavenumber[k];
    }
  }
  return at;
}

function bandArea(s: { wavenumber: Float64Array; intensity: Float64Array }, lo: number, hi: number): number {
  let a = 0;
  for (let k = 1; k < s.intensity.length; k++) {
    if (s.wavenumber[k] >= lo && s.wavenumber[k] <= hi) a += s.intensity[k] * (s.wavenumber[k] - s.wavenumber[k - 1]);
  }
  return a;
}

describe('FFT and correlation functions', () => {
  it('transforms a known sequence (DFT by definition)', () => {
    const n = 8;
    const x = [1, 2, 0, -1, 3, 0.5, -2, 1];
    const re = Float64Array.from(x);
    const im = new Float64Array(n);
    fftInPlace(re, im, -1);
    for (let k = 0; k < n; k++) {
      let sr = 0;
      let si = 0;
      for (let t = 0; t < n; t++) {
        sr += x[t] * Math.cos((-2 * Math.PI * k * t) / n);
        si += x[t] * Math.sin((-2 * Math.PI * k * t) / n);
      }
      expect(re[k]).toBeCloseTo(sr, 12);
      expect(im[k]).toBeCloseTo(si, 12);
    }
  });

  it('Wiener–Khinchin: the FFT autocorrelation equals the direct lag sum', () => {
    const n = 300;
    const xs = Array.from({ length: n }, (_, i) => Math.sin(0.3 * i) + 0.2 * Math.cos(1.7 * i + 0.5) + ((i * 7919) % 13) / 13);
    const c = autocorrelation(xs, 120);
    for (const tau of [0, 1, 5, 37, 120]) {
      let s = 0;
      for (let t = 0; t + tau < n; t++) s += xs[t] * xs[t + tau];
      expect(c[tau]).toBeCloseTo(s / (n - tau), 10);
    }
  });
});

describe('line shapes', () => {
  it('a polarisability oscillating at 1000 cm⁻¹ gives its peak there', () => {
    const n = 4096;
    const t = new Float64Array(9 * n);
    for (let f = 0; f < n; f++) {
      const a = 0.3 * Math.cos(omega(1000) * f * dtFs);
      t[9 * f] = 10 + a;
      t[9 * f + 4] = 10 + a;
      t[9 * f + 8] = 10 + a;
    }
    const r = ramanSpectra(t, { timeStepFs: dtFs, maxCorrelationFs: 1500 });
    expect(Math.abs(peakWavenumber(r.isotropic) - 1000)).toBeLessThan(10);
    // An isotropic fluctuation has no anisotropic part: depolarised intensity vanishes.
    expect(bandArea(r.depolarised, 900, 1100)).toBeLessThan(1e-9 * bandArea(r.polarised, 900, 1100));
  });

  it('two oscillators give two peaks with intensities in the ratio of squared amplitudes', () => {
    const n = 8192;
    const m = new Float64Array(3 * n);
    for (let f = 0; f < n; f++) {
      m[3 * f + 2] = 2 * Math.cos(omega(800) * f) + 1 * Math.cos(omega(1600) * f + 0.3);
    }
    const s = infraredSpectrum(m, { timeStepFs: dtFs, maxCorrelationFs: 3000 });
    const a1 = bandArea(s, 700, 900);
    const a2 = bandArea(s, 1500, 1700);
    expect(a1 / a2).toBeGreaterThan(4 * 0.95);
    expect(a1 / a2).toBeLessThan(4 * 1.05);
  });

  it('the integral of the spectrum is C(0) (inverse transform at t = 0)', () => {
    const L = 256;
    const corr = Float64Array.from({ length: L }, (_, i) => Math.exp(-i / 30) * Math.cos(0.2 * i));
    const s = correlationSpectrum(corr, { timeStepFs: 2, window: 'none', padding: 2 });
    // Two-sided integral over frequency (Hz), with ν = c ν̃: ∫ I dν = C(0).
    const dnu = (s.wavenumber[1] - s.wavenumber[0]) * SPEED_OF_LIGHT_CM_PER_S;
    let sum = s.intensity[0] + s.intensity[s.intensity.length - 1];
    for (let k = 1; k < s.intensity.length - 1; k++) sum += 2 * s.intensity[k];
    expect(sum * dnu * 1e-15).toBeCloseTo(corr[0], 8);
  });

  it('depolarisation ratio 1/3 for a fluctuation along one axis only (textbook Raman invariants)', () => {
    // δα = b cos(ωt) e_x e_x: ᾱ' = b/3, γ'² = b², ρ = 3γ²/(45ᾱ² + 4γ²) = 1/3 (standard light-scattering
    // result for an isotropic sample; D. A. Long, The Raman Effect, 2002).
    const n = 4096;
    const t = new Float64Array(9 * n);
    for (let f = 0; f < n; f++) {
      t[9 * f] = 5 + 0.4 * Math.cos(omega(1200) * f);
      t[9 * f + 4] = 5;
      t[9 * f + 8] = 5;
    }
    const r = ramanSpectra(t, { timeStepFs: dtFs, maxCorrelationFs: 1500 });
    const rho = bandArea(r.depolarised, 1100, 1300) / bandArea(r.polarised, 1100, 1300);
    expect(rho).toBeCloseTo(1 / 3, 6);
  });

  it('the harmonic quantum correction raises high-frequency lines relative to low ones', () => {
    const n = 4096;
    const m = new Float64Array(3 * n);
    for (let f = 0; f < n; f++) m[3 * f] = Math.cos(omega(500) * f) + Math.cos(omega(3000) * f);
    const classical = infraredSpectrum(m, { timeStepFs: dtFs, maxCorrelationFs: 1500 });
    const quantum = infraredSpectrum(m, { timeStepFs: dtFs, maxCorrelationFs: 1500, correction: 'harmonic', temperatureK: 300 });
    const ratioC = bandArea(classical, 2900, 3100) / bandArea(classical, 400, 600);
    const ratioQ = bandArea(quantum, 2900, 3100) / bandArea(quantum, 400, 600);
    // βħω at 3000 cm⁻¹ and 300 K is 14.4; the factor x/(1−e^{−x}) ≈ 14.4 there and ≈ 2.6 at 500 cm⁻¹.
    expect(ratioQ / ratioC).toBeGreaterThan(4.5);
    expect(ratioQ / ratioC).toBeLessThan(6.5);
    expect(classical.note).toMatch(/quantum correction: none/);
    expect(quantum.note).toMatch(/harmonic at 300 K/);
  });
});
