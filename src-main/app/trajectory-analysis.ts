// The analyse use case: statistics of predictions along a trajectory (what `predict` wrote): mean ε and α
// tensors with block-averaged standard errors and the plateau over block sizes, principal refractive indices
// and birefringence with delta-method errors, per-species contributions (extended XYZ with local tensors), the
// applicability summary, and optionally a per-frame CSV, a summary CSV and Raman/IR line shapes.
import { LOCAL_CONTRIBUTION_CAVEAT } from '../core/learning/contributions.ts';
import type { BlockAverage } from '../core/trajectory/statistics.ts';
import { runningMean } from '../core/trajectory/statistics.ts';
import { infraredSpectrum, ramanSpectra, type Spectrum, type SpectrumOptions } from '../core/trajectory/spectra.ts';
import { DEFAULT_MIN_BLOCKS, opticalStats, tensorStats, type OpticalStats, type TensorStats } from '../core/trajectory/trajectory-summary.ts';
import { InputError } from '../core/errors.ts';
import { withError } from '../core/numerics/uncertain.ts';
import { summariseReasonTexts } from '../core/learning/domain.ts';
import { writeFileAtomic } from '../io/atomic.ts';
import { csvRecord } from '../io/csv.ts';
import { tensorCsvWriter } from '../io/prediction/prediction-format.ts';
import { readTrajectorySeries, type TrajectorySeries } from '../io/trajectory-series.ts';

const fmt = (x: number, d = 6) => (Number.isFinite(x) ? x.toPrecision(d) : String(x));

function plateauText(b: BlockAverage): string {
  return b.plateau ? `plateau from block size ${b.plateauBlockSize}, g = ${b.inefficiency.toFixed(1)}` : 'NO PLATEAU';
}

interface Row {
  section: string;
  quantity: string;
  component: string;
  value?: number;
  standardError?: number;
  unit: string;
  stats?: BlockAverage;
  blockSize?: number;
  blocks?: number;
}

function rowText(r: Row): string {
  // an empty field where a figure is undefined (no error of a zero anisotropy, no plateau block size)
  const n = (x: number | undefined) => (x === undefined || !Number.isFinite(x) ? '' : String(x));
  const s = r.stats;
  return csvRecord([
    r.section, r.quantity, r.component, n(r.value), n(r.standardError), r.unit,
    s ? (s.plateau ? '1' : '0') : '', s && s.plateauBlockSize !== null ? String(s.plateauBlockSize) : '', s ? n(s.inefficiency) : '', n(r.blockSize), n(r.blocks),
  ]);
}

function checkEvenlySpaced(frames: number[], file: string): number {
  if (frames.length < 2) return 1;
  const step = frames[1] - frames[0];
  for (let i = 1; i < frames.length; i++) {
    if (frames[i] - frames[i - 1] !== step || step <= 0) {
      throw new InputError(`frames ${frames[i - 1]} and ${frames[i]} are not spaced like frames ${frames[0]} and ${frames[1]}`, { file }, 'spectra need equally spaced frames: predict with one --stride and no gaps (merge all shards)');
    }
  }
  return step;
}

function tensorReport(name: string, label: string, unit: string, t: TensorStats, rows: Row[], lines: string[], noPlateau: string[]): void {
  lines.push(`mean ${label}${unit ? ` (${unit})` : ''}, ± standard error from block averaging:`);
  for (const c of t.components) {
    lines.push(`  ${c.component.padEnd(4)} ${withError(c.stats.mean, c.stats.standardError, 8).padEnd(26)} ${plateauText(c.stats)}`);
    rows.push({ section: 'mean', quantity: name, component: c.component, value: c.stats.mean, standardError: c.stats.standardError, unit, stats: c.stats });
    for (const l of c.stats.levels) rows.push({ section: 'blocks', quantity: name, component: c.component, standardError: l.standardError, unit, blockSize: l.blockSize, blocks: l.blocks });
    if (!c.stats.plateau) noPlateau.push(`${name}_${c.component}`);
  }
  lines.push(`  iso  ${withError(t.iso.mean, t.iso.standardError, 8).padEnd(26)} ${plateauText(t.iso)}`);
  rows.push({ section: 'mean', quantity: name, component: 'iso', value: t.iso.mean, standardError: t.iso.standardError, unit, stats: t.iso });
  for (const l of t.iso.levels) rows.push({ section: 'blocks', quantity: name, component: 'iso', standardError: l.standardError, unit, blockSize: l.blockSize, blocks: l.blocks });
  if (!t.iso.plateau) noPlateau.push(`${name}_iso`);
  lines.push(`  anisotropy of the mean ${Number.isFinite(t.anisotropyError) ? withError(t.anisotropy, t.anisotropyError) : fmt(t.anisotropy, 6)}`);
  rows.push({ section: 'mean', quantity: name, component: 'aniso', value: t.anisotropy, standardError: t.anisotropyError, unit, stats: t.anisotropyStats ?? undefined });
}

function opticsReport(o: OpticalStats, rows: Row[], lines: string[], noPlateau: string[]): void {
  lines.push('principal refractive indices of the mean ε (ascending), ± standard error:');
  for (let k = 0; k < 3; k++) {
    lines.push(`  n_${k + 1} ${withError(o.n[k], o.nErrors[k], 8)}   (ε_${k + 1} ${withError(o.principal[k], o.principalErrors[k], 8)})`);
    rows.push({ section: 'optics', quantity: 'n', component: String(k + 1), value: o.n[k], standardError: o.nErrors[k], unit: '', stats: o.stats[k] });
    rows.push({ section: 'optics', quantity: 'eps_principal', component: String(k + 1), value: o.principal[k], standardError: o.principalErrors[k], unit: '' });
    if (!o.stats[k].plateau) noPlateau.push(`n_${k + 1}`);
  }
  lines.push(`  birefringence n_3 − n_1 = ${withError(o.birefringence, o.birefringenceError, 4)}`);
  rows.push({ section: 'optics', quantity: 'birefringence', component: 'n3-n1', value: o.birefringence, standardError: o.birefringenceError, unit: '', stats: o.stats[3] });
  for (const [i, j] of o.unresolved) lines.push(`  note: ε_${i} and ε_${j} differ by less than their errors: this trajectory does not resolve them (the birefringence may be noise)`);
  lines.push(`  (${o.method})`);
}

function applicabilityReport(s: TrajectorySeries, rows: Row[], lines: string[]): void {
  if (!s.outside && !s.maxDistance) {
    lines.push('applicability: the file has no applicability figures');
    return;
  }
  const n = s.frames.length;
  const outIdx = s.outside ? s.frames.filter((_, i) => s.outside![i]) : [];
  const ranges: string[] = [];
  for (let i = 0; i < outIdx.length && ranges.length < 12; ) {
    let j = i;
    while (j + 1 < outIdx.length && outIdx[j + 1] - outIdx[j] === (s.frames[1] ?? 1) - (s.frames[0] ?? 0)) j++;
    ranges.push(i === j ? String(outIdx[i]) : `${outIdx[i]}…${outIdx[j]}`);
    i = j + 1;
  }
  lines.push(`applicability: ${outIdx.length} of ${n} frames flagged outside the training data${outIdx.length ? ` (frames ${ranges.join(', ')}${ranges.length >= 12 ? ', …' : ''})` : ''}`);
  rows.push({ section: 'applicability', quantity: 'frames_outside', component: '', value: outIdx.length, unit: 'frames' });
  if (s.atomsOutside) {
    let max = 0;
    let at = 0;
    let total = 0;
    s.atomsOutside.forEach((a, i) => {
      total += a;
      if (a > max) {
        max = a;
        at = s.frames[i];
      }
    });
    lines.push(`  atoms outside: at most ${max} in one frame (frame ${at}), ${(total / n).toFixed(2)} per frame on average`);
    rows.push({ section: 'applicability', quantity: 'atoms_outside_max', component: String(at), value: max, unit: 'atoms' });
    rows.push({ section: 'applicability', quantity: 'atoms_outside_mean', component: '', value: total / n, unit: 'atoms' });
  }
  if (s.maxDistance) {
    let max = -Infinity;
    let at = 0;
    s.maxDistance.forEach((d, i) => {
      if (d > max) {
        max = d;
        at = s.frames[i];
      }
    });
    const th = s.threshold !== null ? ` (threshold ${fmt(s.threshold, 4)}, ${(max / s.threshold).toFixed(2)}× it)` : '';
    lines.push(`  largest distance to the training data: ${fmt(max, 4)} in frame ${at}${th}`);
    rows.push({ section: 'applicability', quantity: 'max_distance', component: String(at), value: max, unit: 'feature distance (0…2)' });
    if (s.threshold !== null) rows.push({ section: 'applicability', quantity: 'threshold', component: '', value: s.threshold, unit: 'feature distance (0…2)' });
  }
  if (s.reasons) {
    const kinds = summariseReasonTexts(s.reasons.map((text, i) => ({ frame: s.frames[i], text })));
    if (kinds.length === 0) lines.push('  no atom or frame outside the training ranges');
    else lines.push('  reasons (frames in which each appears; the three worst per frame are recorded):');
    for (const k of kinds.slice(0, 8)) {
      lines.push(`    ${k.kind}: ${k.frames} frame${k.frames === 1 ? '' : 's'} (e.g. frame ${k.example.frame}: ${k.example.text})`);
      rows.push({ section: 'applicability', quantity: 'reason', component: k.kind, value: k.frames, unit: 'frames' });
    }
    if (kinds.length > 8) lines.push(`    … and ${kinds.length - 8} more kinds`);
  }
  if (s.score) {
    let max = -Infinity;
    let at = 0;
    s.score.forEach((v, i) => {
      if (v > max) {
        max = v;
        at = s.frames[i];
      }
    });
    lines.push(`  out-of-domain score: largest ${fmt(max, 3)} in frame ${at}`);
    rows.push({ section: 'applicability', quantity: 'ood_score_max', component: String(at), value: max, unit: '' });
  }
  if (s.farthest.length > 0) {
    lines.push(`  farthest atoms: ${s.farthest.slice(0, 5).map((a) => `${a.species}${a.atom} in frame ${a.frame} (${fmt(a.distance, 3)})`).join(', ')}`);
    for (const a of s.farthest) rows.push({ section: 'applicability', quantity: 'far_atom', component: `${a.species}${a.atom}@${a.frame}`, value: a.distance, unit: 'feature distance (0…2)' });
  }
}

function speciesReport(s: TrajectorySeries, minBlocks: number, rows: Row[], lines: string[], noPlateau: string[]): void {
  if (!s.species || !s.localKind) return;
  const unit = s.localKind === 'local_alpha_cm_A3' ? 'Å³' : '';
  // molecules and clusters: the local tensors sum to their polarisability in vacuum, not to a cell's α_CM
  const what = s.localKind === 'local_alpha_cm_A3' ? (s.alphaMol ? 'α (in vacuum)' : 'α_CM') : 'ε − 1';
  lines.push(`per-species contributions to ${what}${unit ? ` (${unit})` : ''} (sums of the per-atom local tensors), ± standard error:`);
  lines.push(`  note: ${LOCAL_CONTRIBUTION_CAVEAT}`);
  let total = 0;
  const stats = s.species.map((sp) => ({ sp, t: tensorStats(Float64Array.from(sp.sum), minBlocks) }));
  for (const { t } of stats) total += t.iso.mean;
  for (const { sp, t } of stats) {
    const share = total !== 0 ? (100 * t.iso.mean) / total : NaN;
    lines.push(`  ${sp.species.padEnd(3)} ${String(sp.atoms).padStart(5)} atoms   iso ${withError(t.iso.mean, t.iso.standardError, 6)} (${share.toFixed(1)} %)   per atom ${withError(t.iso.mean / sp.atoms, t.iso.standardError / sp.atoms, 6)}   aniso of the mean ${fmt(t.anisotropy, 4)}`);
    rows.push({ section: 'species', quantity: sp.species, component: 'iso', value: t.iso.mean, standardError: t.iso.standardError, unit, stats: t.iso });
    rows.push({ section: 'species', quantity: sp.species, component: 'iso_per_atom', value: t.iso.mean / sp.atoms, standardError: t.iso.standardError / sp.atoms, unit, stats: t.iso });
    for (const c of t.components) rows.push({ section: 'species', quantity: sp.species, component: c.component, value: c.stats.mean, standardError: c.stats.standardError, unit, stats: c.stats });
    rows.push({ section: 'species', quantity: sp.species, component: 'atoms', value: sp.atoms, unit: 'atoms' });
    if (!t.iso.plateau) noPlateau.push(`${sp.species}_iso`);
  }
}

/** The spectra to write: where, the time between consecutive frames of the file, and the line-shape options. */
export interface SpectraRequest {
  path: string;
  /** Time between consecutive frames of the trajectory file (fs), > 0. */
  timeStepFs: number;
  options: Omit<SpectrumOptions, 'timeStepFs'>;
  /** Which tensor series the Raman line shapes use (default: α_c if the file has it, else α_CM, else a molecule's α, else ε). */
  ramanFrom?: 'alpha-c' | 'alpha-cm' | 'alpha-mol' | 'eps';
}

async function writeSpectra(req: SpectraRequest, s: TrajectorySeries, lines: string[]): Promise<void> {
  const dt = req.timeStepFs;
  const stride = checkEvenlySpaced(s.frames, s.file);
  const opts: SpectrumOptions = { ...req.options, timeStepFs: dt * stride };
  // Default: the first polarisability series the file has (α_c, then α_CM, then a molecule's α), else ε.
  const from = req.ramanFrom ?? (s.alphaC ? 'alpha-c' : s.alphaCM ? 'alpha-cm' : s.alphaMol ? 'alpha-mol' : 'eps');
  const series = from === 'alpha-c' ? s.alphaC : from === 'alpha-cm' ? s.alphaCM : from === 'alpha-mol' ? s.alphaMol : s.eps;
  const cols: { name: string; sp: Spectrum }[] = [];
  if (series) {
    const r = ramanSpectra(series, opts);
    cols.push({ name: 'raman_isotropic', sp: r.isotropic }, { name: 'raman_anisotropic', sp: r.anisotropic }, { name: 'raman_vv', sp: r.polarised }, { name: 'raman_vh', sp: r.depolarised });
  }
  if (s.dipole) cols.push({ name: 'infrared', sp: infraredSpectrum(s.dipole, opts) });
  if (cols.length === 0) throw new InputError(`the file has no ${from} tensors and no dipole series`, { file: s.file }, 'choose --raman-from to match the columns the file has');
  const grid = cols[0].sp.wavenumber;
  const head = [
    `Polarweave vibrational line shapes from ${s.file} (${s.frames.length} frames, ${fmt(opts.timeStepFs, 6)} fs apart${stride !== 1 ? ` = ${stride} × ${dt} fs` : ''}); predictions are model estimates.`,
    series ? `Raman from the ${from} series: isotropic = FT⟨δᾱ(0)δᾱ(t)⟩, anisotropic = FT⟨tr β(0)β(t)⟩ (β traceless part), VV = iso + (2/15) aniso, VH = (1/10) aniso.` : 'No polarisability series: Raman not computed.',
    s.dipole ? `Infrared = FT⟨δM(0)·δM(t)⟩ of the dipole (${s.dipoleSource}).` : 'No dipole series in the file: infrared not computed.',
    cols[0].sp.note,
    'Units: wavenumber in cm^-1; intensities in (tensor unit)^2 · fs, relative.',
  ];
  const parts = [head.map((l) => `# ${l}\n`).join(''), ['wavenumber_cm-1', ...cols.map((c) => c.name)].join(',') + '\n'];
  const names = ['wavenumber_cm-1', ...cols.map((c) => c.name)];
  for (let k = 0; k < grid.length; k++) parts.push(csvRecord([grid[k], ...cols.map((c) => c.sp.intensity[k])], names));
  await writeFileAtomic(req.path, parts.join(''));
  lines.push(`spectra: ${cols.map((c) => c.name).join(', ')} written to ${req.path}`);
  lines.push(`  ${cols[0].sp.note}`);
}

async function writePerFrame(path: string, s: TrajectorySeries): Promise<void> {
  if (!s.eps) throw new InputError('the file has no ε tensors for a per-frame table', { file: s.file });
  if (!s.volume) throw new InputError('the file has no cell volumes (column volume_A3 or a Lattice) for a per-frame table', { file: s.file });
  const volume = s.volume;
  const extra = ['eps_iso_running_mean', ...(s.outside ? ['outside'] : []), ...(s.maxDistance ? ['max_distance'] : [])];
  const w = tensorCsvWriter(path, {
    source: `polarweave analyse of ${s.file}`,
    alpha: s.alphaCM ? { kind: 'alpha-cm', unit: 'A3' } : undefined,
    extraColumns: extra,
    extraDescriptions: { eps_iso_running_mean: 'mean of eps_iso over the frames up to this one', outside: '1 when atoms are outside the training data', max_distance: 'largest per-atom distance to the training data (0…2)' },
  });
  const n = s.frames.length;
  const iso = new Float64Array(n);
  for (let f = 0; f < n; f++) iso[f] = (s.eps[9 * f] + s.eps[9 * f + 4] + s.eps[9 * f + 8]) / 3;
  const run = runningMean(iso);
  try {
    for (let f = 0; f < n; f++) {
      const ex: Record<string, number> = { eps_iso_running_mean: run[f] };
      if (s.outside) ex.outside = s.outside[f] ? 1 : 0;
      if (s.maxDistance) ex.max_distance = s.maxDistance[f];
      await w.writeRow({ frame: s.frames[f], volumeA3: volume[f], eps: s.eps.subarray(9 * f, 9 * f + 9), alpha: s.alphaCM?.subarray(9 * f, 9 * f + 9), extra: ex });
    }
  } catch (e) {
    await w.abort();
    throw e;
  }
  await w.commit();
}

/** What to analyse and which files to write. */
export interface AnalyseRequest {
  file: string;
  minBlocks?: number;
  /** The summary table (CSV). */
  output?: string;
  /** The per-frame table (CSV). */
  perFrame?: string;
  spectra?: SpectraRequest;
  /** A time step was given without a spectra file (the report says how to get them). */
  timeStepOnly?: boolean;
  signal?: AbortSignal;
}

/**
 * The analyse use case: statistics of a predicted trajectory (what `predict` or the window's export wrote), the
 * summary and per-frame tables and the line shapes asked for; returns the report, line by line. The window's
 * Trajectory view gets its numbers from the same core functions (app/frame-json.ts trajectoryStatsJ).
 */
export async function analyseTrajectory(req: AnalyseRequest): Promise<string[]> {
  const { file } = req;
  const minBlocks = req.minBlocks ?? DEFAULT_MIN_BLOCKS;
  const s = await readTrajectorySeries(file, req.signal);
  const n = s.frames.length;
  if (n < 2) throw new InputError(`only ${n} frame(s): nothing to average`, { file }, 'analyse a trajectory of many frames');
  const lines: string[] = [];
  const rows: Row[] = [];
  const noPlateau: string[] = [];
  const step = n > 1 ? s.frames[1] - s.frames[0] : 1;
  lines.push(`analyse: ${n} frames (${s.frames[0]}…${s.frames[n - 1]}${step !== 1 ? `, every ${step}` : ''}) from ${file}; values are model estimates`);
  if (s.eps) tensorReport('eps', 'ε', '', tensorStats(s.eps, minBlocks), rows, lines, noPlateau);
  if (s.eps) opticsReport(opticalStats(s.eps, minBlocks), rows, lines, noPlateau);
  if (s.alphaCM) tensorReport('alpha_cm', 'α_CM', 'Å³', tensorStats(s.alphaCM, minBlocks), rows, lines, noPlateau);
  if (s.alphaC) tensorReport('alpha_c', 'α_c', 'Å³', tensorStats(s.alphaC, minBlocks), rows, lines, noPlateau);
  if (s.alphaMol) {
    lines.push('frames without a periodic cell (a molecule or cluster): ε, n and Δn are not defined for them; their α is the polarisability in vacuum');
    tensorReport('alpha_mol', 'α of the molecule or cluster in vacuum', 'Å³', tensorStats(s.alphaMol, minBlocks), rows, lines, noPlateau);
  }
  speciesReport(s, minBlocks, rows, lines, noPlateau);
  applicabilityReport(s, rows, lines);
  if (req.spectra) await writeSpectra(req.spectra, s, lines);
  else if (req.timeStepOnly) lines.push('spectra: give --spectra OUT.csv to write the line shapes');
  if (noPlateau.length > 0) {
    lines.push(
      `warning: no plateau in the block averages of ${noPlateau.slice(0, 8).join(', ')}${noPlateau.length > 8 ? ` and ${noPlateau.length - 8} more` : ''}: the trajectory is too short for its correlation time. The error bars shown are the largest block estimates and may still be too small; run longer.`,
    );
  }
  lines.push('Block averaging: successive halving (Flyvbjerg–Petersen); the plateau is the first block size whose error agrees with the next two within their own errors.');
  if (req.output) {
    const head = [
      `Polarweave trajectory summary of ${file} (${n} frames); predictions are model estimates.`,
      'section mean: mean and standard error of the mean (block averaging); plateau 1/0, the block size where it starts, g = statistical inefficiency.',
      'section blocks: the standard error at each block size (block_size samples per block, blocks blocks): the plateau over block sizes.',
      'section optics: principal values/indices of the mean eps and the birefringence; errors by the delta method (per-frame first-order change, block-averaged).',
      'section species: sums of per-atom local tensors per species; section applicability: out-of-domain figures.',
      ...(noPlateau.length ? ['WARNING: no plateau for some quantities: the trajectory is too short for its correlation time.'] : []),
    ];
    const header = ['section', 'quantity', 'component', 'value', 'standard_error', 'unit', 'plateau', 'plateau_block_size', 'inefficiency', 'block_size', 'blocks'];
    await writeFileAtomic(req.output, head.map((l) => `# ${l}\n`).join('') + csvRecord(header) + rows.map(rowText).join(''));
    lines.push(`summary written to ${req.output}`);
  }
  if (req.perFrame) {
    await writePerFrame(req.perFrame, s);
    lines.push(`per-frame table written to ${req.perFrame}`);
  }
  return lines;
}

