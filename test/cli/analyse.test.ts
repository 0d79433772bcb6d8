import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeFrame } from '../../src-main/core/geometry/frame.ts';
import { makeRng } from '../../src-main/core/numerics/random.ts';
import { parseCsv } from '../../src-main/io/csv.ts';
import { formatExtxyzFrame } from '../../src-main/io/extxyz.ts';
import { SPEED_OF_LIGHT_CM_PER_S } from '../../src-main/core/trajectory/spectra.ts';
import { cli } from './run-cli.ts';
import { alphaColumn } from '../../src-main/io/prediction/prediction-format.ts';

let dir: string;
const p = (n: string) => join(dir, n);
beforeAll(() => (dir = mkdtempSync(join(tmpdir(), 'pw-analyse-'))));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const VOIGT = ['xx', 'yy', 'zz', 'yz', 'xz', 'xy'] as const;

/** A prediction-style CSV: frame, volume, ε and α_c in Voigt order, and applicability columns. */
function writeSeries(file: string, n: number, eps: (f: number) => number[], alphaC?: (f: number) => number[], dipole?: (f: number) => number[]) {
  const cols = ['frame', 'tag', 'volume_A3', ...VOIGT.map((c) => `eps_${c}`)];
  // the column names predict writes (io/prediction/prediction-format.ts)
  if (alphaC) cols.push(...VOIGT.map((c) => alphaColumn('alpha-c', c)));
  if (dipole) cols.push('dipole_x', 'dipole_y', 'dipole_z');
  cols.push('max_distance', 'threshold', 'atoms_outside', 'outside');
  const lines = ['# synthetic series for the analyse tests', cols.join(',')];
  for (let f = 0; f < n; f++) {
    const out = f % 97 === 5; // a few frames marked outside
    lines.push([f, `s${f}`, 1000, ...eps(f), ...(alphaC ? alphaC(f) : []), ...(dipole ? dipole(f) : []), out ? 0.4 : 0.1, 0.3, out ? 2 : 0, out ? 1 : 0].join(','));
  }
  writeFileSync(file, lines.join('\n') + '\n');
}

/** Stationary AR(1) x_t = φ x_{t−1} + σ e_t started from its stationary distribution. */
function ar1(n: number, phi: number, sigma: number, seed: number): Float64Array {
  const rng = makeRng(seed);
  const x = new Float64Array(n);
  x[0] = (sigma / Math.sqrt(1 - phi * phi)) * rng.normal();
  for (let t = 1; t < n; t++) x[t] = phi * x[t - 1] + sigma * rng.normal();
  return x;
}

function summary(file: string) {
  const t = parseCsv(readFileSync(file, 'utf8'), file);
  const find = (section: string, quantity: string, component: string) => {
    const i = t.records.findIndex((r) => r[0] === section && r[1] === quantity && r[2] === component);
    if (i < 0) throw new Error(`no row ${section} ${quantity} ${component}`);
    const r = t.records[i];
    return { value: Number(r[3]), se: Number(r[4]), plateau: r[6] };
  };
  return { t, find };
}

describe('polarweave analyse', () => {
  it('recovers the mean and the error bar of correlated AR(1) series, and the indices of the mean ε', async () => {
    const n = 8192;
    const phi = 0.9;
    const sigma = 0.01;
    const mu = [2.0, 2.1, 2.3];
    const s = Array.from({ length: 6 }, (_, k) => ar1(n, phi, sigma, 11 + k));
    writeSeries(p('ar1.csv'), n, (f) => [mu[0] + s[0][f], mu[1] + s[1][f], mu[2] + s[2][f], s[3][f] * 0.1, s[4][f] * 0.1, s[5][f] * 0.1]);
    const r = await cli('analyse', p('ar1.csv'), '-o', p('ar1-summary.csv'), '--per-frame', p('ar1-frames.csv'));
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    // Standard error of the mean of a stationary AR(1) series: σ_x² = σ²/(1−φ²) and SE² = σ_x²/N · (1+φ)/(1−φ)
    // (the integrated autocorrelation of a first-order autoregressive process; textbook result, from memory).
    const seTrue = Math.sqrt((sigma * sigma) / (1 - phi * phi) / n * ((1 + phi) / (1 - phi)));
    const { find } = summary(p('ar1-summary.csv'));
    for (const [k, c] of ['xx', 'yy', 'zz'].entries()) {
      const row = find('mean', 'eps', c);
      expect(row.plateau).toBe('1');
      expect(Math.abs(row.value - mu[k])).toBeLessThan(4 * seTrue);
      expect(row.se / seTrue).toBeGreaterThan(0.75);
      expect(row.se / seTrue).toBeLessThan(1.3);
    }
    // the naive (uncorrelated) error would be √19 ≈ 4.4 times too small: block level 1 shows it
    const t = summary(p('ar1-summary.csv')).t;
    const level1 = t.records.find((x) => x[0] === 'blocks' && x[1] === 'eps' && x[2] === 'xx' && x[9] === '1');
    expect(Number(level1![4]) / seTrue).toBeLessThan(0.35);
    // n_k = √ε_k of the mean, δn = δε/(2n) for a diagonal mean tensor with distinct values
    const n1 = find('optics', 'n', '1');
    expect(n1.value).toBeCloseTo(Math.sqrt(2.0), 3);
    expect(n1.se / (seTrue / (2 * Math.sqrt(2.0)))).toBeGreaterThan(0.75);
    expect(n1.se / (seTrue / (2 * Math.sqrt(2.0)))).toBeLessThan(1.3);
    const dn = find('optics', 'birefringence', 'n3-n1');
    expect(dn.value).toBeCloseTo(Math.sqrt(2.3) - Math.sqrt(2.0), 3);
    // the errors of n_3 and n_1 add in quadrature (independent series)
    const seDn = Math.hypot(seTrue / (2 * Math.sqrt(2.3)), seTrue / (2 * Math.sqrt(2.0)));
    expect(dn.se / seDn).toBeGreaterThan(0.7);
    expect(dn.se / seDn).toBeLessThan(1.4);
    expect(r.out).toMatch(/applicability: 85 of 8192 frames have atoms outside the training data \(frames 5, 102, 199/);
    expect(r.out).toMatch(/delta method/);
    const frames = parseCsv(readFileSync(p('ar1-frames.csv'), 'utf8'), 'f');
    expect(frames.records.length).toBe(n);
    // the running mean ends at the mean of the whole run
    expect(frames.numbers('eps_iso_running_mean')[n - 1]).toBeCloseTo(find('mean', 'eps', 'iso').value, 9);
    expect(Math.abs(find('mean', 'eps', 'iso').value - (mu[0] + mu[1] + mu[2]) / 3)).toBeLessThan(4 * seTrue);
  }, 60_000);

  it('warns plainly when a series is too short for its correlation time', async () => {
    const s = ar1(48, 0.995, 0.01, 3);
    writeSeries(p('short.csv'), 48, (f) => [2 + s[f], 2 + s[f], 2 + s[f], 0, 0, 0]);
    const r = await cli('analyse', p('short.csv'), '-o', p('short-summary.csv'));
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/warning: no plateau .*the trajectory is too short for its correlation time/);
    expect(readFileSync(p('short-summary.csv'), 'utf8')).toMatch(/WARNING: no plateau/);
  });

  it('writes Raman and infrared line shapes that peak at the frequencies of oscillating tensors', async () => {
    const dt = 0.5; // fs
    const n = 4096;
    // ν̃ → angular frequency per fs: 2π c ν̃ × 1e−15
    const w = (nu: number) => 2 * Math.PI * SPEED_OF_LIGHT_CM_PER_S * nu * 1e-15;
    const iso = (f: number) => 0.3 * Math.cos(w(1000) * f * dt); // isotropic mode at 1000 cm⁻¹
    const an = (f: number) => 0.2 * Math.cos(w(1600) * f * dt + 0.4); // traceless (xy) mode at 1600 cm⁻¹
    writeSeries(
      p('osc.csv'),
      n,
      () => [2, 2, 2, 0, 0, 0],
      (f) => [20 + iso(f), 20 + iso(f), 20 + iso(f), 0, 0, an(f)],
      (f) => [0.1 * Math.cos(w(700) * f * dt), 0, 0],
    );
    const r = await cli('analyse', p('osc.csv'), '--time-step', String(dt), '--spectra', p('spectra.csv'), '--quantum-correction', 'none');
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const sp = parseCsv(readFileSync(p('spectra.csv'), 'utf8'), 's');
    expect(sp.comments.join('\n')).toMatch(/hann window, zero padding to \d+ points, quantum correction: none/);
    const nu = sp.numbers('wavenumber_cm-1');
    const spacing = nu[1] - nu[0];
    const peak = (col: string) => {
      const y = sp.numbers(col);
      let k = 1;
      for (let i = 1; i < y.length; i++) if (y[i] > y[k]) k = i;
      return nu[k];
    };
    expect(Math.abs(peak('raman_isotropic') - 1000)).toBeLessThanOrEqual(spacing);
    expect(Math.abs(peak('raman_anisotropic') - 1600)).toBeLessThanOrEqual(spacing);
    expect(Math.abs(peak('raman_vh') - 1600)).toBeLessThanOrEqual(spacing);
    expect(Math.abs(peak('raman_vv') - 1000)).toBeLessThanOrEqual(spacing);
    expect(Math.abs(peak('infrared') - 700)).toBeLessThanOrEqual(spacing);
    // a purely isotropic mode is polarised: no depolarised (VH) intensity at 1000 cm⁻¹
    const vh = sp.numbers('raman_vh');
    const vv = sp.numbers('raman_vv');
    const at1000 = nu.findIndex((x) => x >= 1000 - spacing / 2);
    expect(vh[at1000] / vv[at1000]).toBeLessThan(1e-3);
  });

  it('takes the Raman series from ε when the file has no polarisability columns, and says so', async () => {
    const dt = 1;
    const w = (nu: number) => 2 * Math.PI * SPEED_OF_LIGHT_CM_PER_S * nu * 1e-15;
    writeSeries(p('eps-only.csv'), 2048, (f) => {
      const a = 0.01 * Math.cos(w(1200) * f * dt);
      return [2 + a, 2 + a, 2 + a, 0, 0, 0];
    });
    const r = await cli('analyse', p('eps-only.csv'), '--time-step', String(dt), '--spectra', p('eps-spectra.csv'));
    expect(r.code, r.err).toBe(0);
    const sp = parseCsv(readFileSync(p('eps-spectra.csv'), 'utf8'), 's');
    expect(sp.comments.join('\n')).toMatch(/Raman from the eps series/);
    const nu = sp.numbers('wavenumber_cm-1');
    const y = sp.numbers('raman_isotropic');
    let k = 1;
    for (let i = 1; i < y.length; i++) if (y[i] > y[k]) k = i;
    expect(Math.abs(nu[k] - 1200)).toBeLessThanOrEqual(nu[1] - nu[0]);
  });

  it('sums per-atom local tensors per species from an extended XYZ prediction file', async () => {
    const rng = makeRng(5);
    const parts: string[] = [];
    for (let f = 0; f < 64; f++) {
      const fr = makeFrame(['O', 'H', 'H', 'O', 'H', 'H'], new Float64Array(18).map(() => rng.uniform() * 5), [6, 0, 0, 0, 6, 0, 0, 0, 6]);
      const local = new Float64Array(54);
      fr.species.forEach((s, i) => {
        const d = (s === 'O' ? 1.2 : 0.4) + 0.01 * rng.normal();
        local[9 * i] = local[9 * i + 4] = local[9 * i + 8] = d;
      });
      const sum = [0, 0, 0, 0, 0, 0, 0, 0, 0];
      for (let i = 0; i < 6; i++) for (let c = 0; c < 9; c++) sum[c] += local[9 * i + c];
      fr.info = { pred_eps: [1.5, 0, 0, 0, 1.5, 0, 0, 0, 1.5], pred_alpha_cm_A3: sum, pred_outside: false, pred_max_distance: 0.1, pred_frame: f };
      fr.arrays = { local_alpha_cm_A3: { kind: 'real', width: 9, data: local }, feature_distance: { kind: 'real', width: 1, data: new Float64Array(6).fill(0.05).map((x, i) => (f === 9 && i === 4 ? 0.9 : x)) } };
      parts.push(formatExtxyzFrame(fr));
    }
    writeFileSync(p('local.extxyz'), parts.join(''));
    const r = await cli('analyse', p('local.extxyz'), '-o', p('local-summary.csv'));
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const { find } = summary(p('local-summary.csv'));
    expect(find('species', 'O', 'iso_per_atom').value).toBeCloseTo(1.2, 2);
    expect(find('species', 'H', 'iso_per_atom').value).toBeCloseTo(0.4, 2);
    // the species contributions add up to the mean α_CM
    expect(find('species', 'O', 'iso').value + find('species', 'H', 'iso').value).toBeCloseTo(find('mean', 'alpha_cm', 'iso').value, 10);
    expect(r.out).toMatch(/farthest atoms: H4 in frame 9 \(0\.900\)/);
  });
});
