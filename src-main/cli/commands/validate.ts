// `polarweave validate`: k-fold cross-validation of a training request, for one route or both, with an
// optional learning curve; prints the RMSE of the isotropic and anisotropic parts of ε (and α_CM), each also as a
// percentage of the spread of the reference, and a plain verdict. The figures: core/learning/error-figures.ts.
import type { ErrorBarCheck } from '../../core/learning/calibration.ts';
import { commandArgs, UsageError } from '../args.ts';
import type { Command } from '../command.ts';
import type { ErrorFigures, Route } from '../../core/learning/model-types.ts';
import { validateValues, type ValueErrorFigures } from '../../core/learning/validation.ts';
import { fmtPct, validateRoutes, verdict, verdictOf } from '../../app/learning.ts';
import { headlineErrors, type StatePointErrors } from '../../core/learning/state-points.ts';
import { isIsolated } from '../../core/learning/targets.ts';
import { checkTargetOptions, parseRequest, parseRoute, progressReporter, readFrames, settingOptions, targetOptions, targetShapeOf } from '../learn-options.ts';

const options = [
  ...targetOptions,
  { name: 'route', value: 'cm|direct|both', help: 'route(s) to validate', default: 'both' },
  { name: 'folds', value: 'K', help: 'number of cross-validation folds', default: '5' },
  { name: 'learning-curve', value: 'N1,N2,…', help: 'training-set sizes (frames) for a learning curve' },
  ...settingOptions,
];

export function formatErrors(e: ErrorFigures, units: string): string {
  const g = (x: number) => x.toPrecision(3);
  return (
    `isotropic (tr/3):         RMSE ${g(e.rmseIso)}${units}  ${fmtPct(e.percentIso)} of the spread  R² ${g(e.r2Iso)}\n` +
    `anisotropic (anisotropy): RMSE ${g(e.rmseAniso)}${units}  ${fmtPct(e.percentAniso)} of the spread  R² ${g(e.r2Aniso)}`
  );
}

export function formatValueErrors(e: ValueErrorFigures): string {
  const g = (x: number) => x.toPrecision(3);
  return `RMSE ${g(e.rmse)}  ${fmtPct(e.percent)} of the spread  R² ${g(e.r2)}  largest error ${g(e.maxError)} (in the property's own units)`;
}

export const validateCommand: Command = {
  name: 'validate',
  summary: 'cross-validate a model of a cell tensor (both routes by default), dipole or scalar, and say whether it is good',
  usage: 'IN --tensor KEY --as eps|alpha-c|alpha-cm|alpha-mol [--isolated-tensor KEY] [--folds K] [--learning-curve 10,20,40] [--route cm|direct|both]   (--as only for a tensor)',
  description:
    'Tensor errors are in the tensor\'s units: isotropic = RMSE of tr/3; anisotropic = root mean square over frames\n' +
    'of the anisotropy √(3/2)·‖ΔT − tr ΔT/3‖ of the error tensor (the eps_aniso invariant of predict\'s CSV).\n' +
    '"of the spread" = RMSE / standard deviation of the reference over the frames; compared on ε and on α_CM.\n' +
    'A dipole (3 numbers) is compared as a vector, RMSE = sqrt(mean |Δμ|²); a scalar as it is.\n' +
    'Frames without a periodic cell (molecules, clusters) are compared on their polarisability (Å³); a set mixing\n' +
    'them with periodic frames reports each kind separately.',
  options,
  async run(argv, io) {
    const { args } = commandArgs(argv, options, { inputs: 1, missing: 'give exactly one input file' });
    const folds = Number(args.options.folds);
    if (!Number.isInteger(folds) || folds < 2) throw new UsageError(`--folds must be a whole number ≥ 2, got "${args.options.folds}"`);
    let curve: number[] | undefined;
    if (args.options['learning-curve']) {
      curve = args.options['learning-curve'].split(',').map((x) => Number(x.trim()));
      if (curve.some((n) => !Number.isInteger(n) || n < 1)) throw new UsageError('--learning-curve takes whole numbers of frames, e.g. 10,20,40');
    }
    const which = parseRoute(args.options.route, true);
    let routes: Route[] = which === 'both' ? ['cm', 'direct'] : [which];
    checkTargetOptions(args);
    const frames = await readFrames(args.positionals[0], io);
    io.err(`validate: ${frames.length} frames read from ${args.positionals[0]}\n`);
    if (which === 'both' && frames.some(isIsolated)) {
      // route direct learns α_c per cell volume, which molecules and clusters do not have (targets.ts frameTarget)
      routes = ['cm'];
      io.out('route direct skipped: the set holds frames without a periodic cell (molecules or clusters), which only route cm can learn\n');
    }
    const shape = targetShapeOf(args, frames);
    if (shape !== 'tensor') {
      // a dipole or a scalar: learnt as it is, one comparison (routes and --as do not apply)
      const report = await validateValues(frames, parseRequest(args, 'cm', shape), { folds, learningCurve: curve }, { signal: io.signal, onProgress: progressReporter(io, 'validate') });
      const what = shape === 'vector' ? `vector "${report.key}" (compared as a whole: RMSE of |Δv|)` : `scalar "${report.key}"`;
      io.out(`${what}: ${folds}-fold cross-validation over ${report.errors.count} frames\n`);
      io.out(`  ${formatValueErrors(report.errors)}\n`);
      for (const lc of report.learningCurve) io.out(`  learning curve, ${lc.trainSize} training frames: error ${fmtPct(lc.errors.percent)} of the spread\n`);
      if (report.skippedSizes.length) io.out(`  learning-curve sizes skipped (more than the training folds hold): ${report.skippedSizes.join(', ')}\n`);
      io.out(`  verdict (rule of thumb): ${verdictOf(report.errors.percent, 'the error')}\n`);
      io.out(errorBarLine(report.errorBars));
      io.out('Rule-of-thumb thresholds: good ≤ 10 % of the spread, usable ≤ 30 % (common practice, no source). Predictions are model estimates.\n');
      return 0;
    }
    const { reports, better } = await validateRoutes(frames, (route) => parseRequest(args, route), routes, { folds, learningCurve: curve }, (route) => ({ signal: io.signal, onProgress: progressReporter(io, `validate ${route}`) }));
    for (const { route, report } of reports) {
      const onEps = report.target.startsWith('eps');
      const mainName = onEps ? `ε${report.target === 'eps' ? '' : report.target.slice(3)}` : report.target;
      io.out(`route ${route}: ${folds}-fold cross-validation over ${frames.length} frames\n`);
      for (const note of report.notes) io.out(`  ${note}\n`);
      io.out(statePointLines(report.statePoints ?? null));
      io.out(`  on ${mainName} (${report.errors.count} frames${report.statePoints ? '; the spread includes the differences between state points' : ''}):\n${indent(formatErrors(report.errors, onEps ? '' : ' Å³'), 4)}\n`);
      for (const o of report.alsoOn) io.out(`  on ${o.target} (${o.errors.count} frames):\n${indent(formatErrors(o.errors, ' Å³'), 4)}\n`);
      for (const lc of report.learningCurve) {
        const pm = (m: number, sd: number | undefined) => (sd !== undefined && lc.repeats && lc.repeats > 1 ? `${fmtPct(m).replace(' %', '')} ± ${fmtPct(sd)}` : fmtPct(m));
        const splits = lc.repeats && lc.repeats > 1 ? ` (mean ± spread of ${lc.repeats} random splits)` : '';
        io.out(`  learning curve, ${lc.trainSize} training frames${splits}: error of ${mainName}, isotropic ${pm(lc.errors.percentIso, lc.spread?.percentIso)}, anisotropic ${pm(lc.errors.percentAniso, lc.spread?.percentAniso)} of the spread\n`);
      }
      if (report.curveTrend) io.out(`  learning curve: ${report.curveTrend}\n`);
      if (report.skippedSizes.length) io.out(`  learning-curve sizes skipped (more than the training folds hold): ${report.skippedSizes.join(', ')}\n`);
      const head = headlineErrors(report);
      io.out(`  verdict (rule of thumb, on ${mainName} ${head.what}): ${verdict(head.errors)}\n`);
      io.out(errorBarLine(report.errorBars));
    }
    if (better) io.out(`comparison on ε: route ${better.route} has the smaller root-mean-square error of the whole tensor (cm ${better.totals.cm.toPrecision(3)}, direct ${better.totals.direct.toPrecision(3)})\n`);
    io.out('Rule-of-thumb thresholds: good ≤ 10 % of the spread, usable ≤ 30 % (common practice, no source). Predictions are model estimates.\n');
    return 0;
  },
};

/** The per-state-point errors, the within-state figure first (the headline: it says how well the model learns within a state). */
export function statePointLines(sp: StatePointErrors | null): string {
  if (!sp) return '';
  const lines = [`  state points (${sp.groups.length}, by ${sp.what}): on ε within state points (relative to the spread within each):`, indent(formatErrors(sp.within, ''), 4)];
  for (const g of sp.groups) lines.push(`    ${g.label} (${g.errors.count} frames): isotropic ${fmtPct(g.errors.percentIso)}, anisotropic ${fmtPct(g.errors.percentAniso)} of its spread (RMSE ${g.errors.rmseIso.toPrecision(2)}, ${g.errors.rmseAniso.toPrecision(2)})`);
  return lines.join('\n') + '\n';
}

function indent(text: string, n: number): string {
  return text
    .split('\n')
    .map((l) => ' '.repeat(n) + l)
    .join('\n');
}

/** How the fold models' calibrated error bars held on the frames they never saw (RMS z near 1 = calibrated). */
function errorBarLine(check: ErrorBarCheck | null): string {
  if (!check) return '  error bars: none (fold models of fewer than 3 frames carry no calibration)\n';
  const parts = check.parts.map((p) => `λ=${p.order} RMS z ${p.z.rmsZ.toFixed(2)}, |z| ≤ 1 for ${(100 * p.z.within1).toFixed(0)} % of ${p.z.count}`);
  if (check.epsIso) parts.push(`ε_iso RMS z ${check.epsIso.rmsZ.toFixed(2)}`);
  return `  error bars on held-out frames: ${parts.join('; ')} (1 = calibrated)\n`;
}
