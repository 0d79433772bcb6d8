// The demo's summary.md: what the run found, in words a class can read. Conventions kept throughout:
// - "%" means one thing only, the error relative to the spread of the reference ("% of the spread", as validate
//   and the window's Checks say); other comparisons are written as differences or ratios.
// - A number gets the digits its error justifies: values compared with the reference are written at the
//   decimal places of their error (core/numerics/uncertain.ts atPlacesOf, the error to two significant digits).
// - The headline liquid figure is the error within state points (core/learning/state-points.ts): the three
//   densities of the liquid inflate the spread of the data and flatter the overall figure.
import type { Frame, Mat3 } from '../core/geometry/frame.ts';
import type { ErrorFigures, FramePrediction, ValidationReport } from '../core/learning/model-types.ts';
import type { Model } from '../core/learning/model.ts';
import { birefringence, convertTensor, refractiveIndices } from '../core/dielectric/clausius-mossotti.ts';
import { fmtPct, verdict } from '../core/learning/error-figures.ts';
import { headlineErrors } from '../core/learning/state-points.ts';
import { describeSettings } from '../core/settings-table.ts';
import { atPlacesOf } from '../core/numerics/uncertain.ts';

export interface SummaryInput {
  liquid: Frame[];
  crystal: Frame[];
  report: ValidationReport & { alsoOn?: { target: string; errors: ErrorFigures }[] };
  crystalErrors: ErrorFigures;
  outsideFrames: number;
  predictions: FramePrediction[];
  predictedMean: Mat3;
  referenceMean: Mat3;
  model: Model;
  seconds: number;
  quick: boolean;
  files: { csv: string; model: string; summary: string; validation: string; clusters: string };
}

/** A value at the decimal places of its error (core/numerics/uncertain.ts, as the CLI and the window print). */
const withError = (x: number, error: number): string => atPlacesOf(x, error);

/** An error or RMSE: two significant digits. */
function g2(x: number): string {
  return Number.isFinite(x) ? Number(x.toPrecision(2)).toString() : String(x);
}

function errorLine(e: ErrorFigures, units = ''): string {
  return `isotropic (tr/3) RMSE ${g2(e.rmseIso)}${units} (${fmtPct(e.percentIso)} of the spread), anisotropic RMSE ${g2(e.rmseAniso)}${units} (${fmtPct(e.percentAniso)} of the spread), ${e.count} frames`;
}

const curveCell = (m: number, sd: number | undefined, repeats: number | undefined) => (sd !== undefined && (repeats ?? 1) > 1 ? `${fmtPct(m).replace(' %', '')} ± ${fmtPct(sd)}` : fmtPct(m));

export function demoSummary(s: SummaryInput): string {
  const report = s.report;
  const sp = report.statePoints ?? null;
  const head = headlineErrors(report);
  // errors of the crystal's predictions against its reference, for the digits of what is compared
  const epsErr = Math.max(s.crystalErrors.rmseIso, s.crystalErrors.rmseAniso);
  const refN = refractiveIndices(s.referenceMean).indices;
  const nErr = epsErr / (2 * refN[0]);
  const diag = (t: Mat3, err: number) => [t[0], t[4], t[8]].map((v) => withError(v, err)).join(', ');
  const n = (t: Mat3) => Array.from(refractiveIndices(t).indices, (v) => withError(v, nErr)).join(', ');
  const dnPred = birefringence(s.predictedMean).delta;
  const dnRef = birefringence(s.referenceMean).delta;
  // Δn = n_max − n_min: its error is that of the anisotropy, δ(aniso ε)/(2n)
  const dnErr = s.crystalErrors.rmseAniso / (2 * refN[0]);
  const maxDist = Math.max(...s.predictions.map((p) => p.applicability.maxDistance));
  const atomsOut = s.predictions.reduce((a, p) => a + p.applicability.atomsOutside, 0);
  const atoms = s.predictions.reduce((a, p) => a + p.applicability.atomDistance.length, 0);
  const v = s.crystal[0].cell ? s.predictions[0].volumeA3 : 0;
  const cmRef = convertTensor(s.referenceMean, 'eps', 'alpha-cm', v);
  const cmPred = convertTensor(s.predictedMean, 'eps', 'alpha-cm', v);
  // dα_CM/dε at the isotropic ε: (3V/4π)·3/(ε+2)²
  const epsIso = (s.referenceMean[0] + s.referenceMean[4] + s.referenceMean[8]) / 3;
  const cmErr = ((3 * v) / (4 * Math.PI)) * (3 / (epsIso + 2) ** 2) * epsErr;
  const full = Math.floor((s.liquid.length * (report.folds - 1)) / report.folds);
  const lines = [
    '# Polarweave demo: summary',
    '',
    '**The demo data is invented** (an invented molecule, force field and point-dipole reference model; see',
    'resources/demo/PROVENANCE.md). **Predictions are model estimates**, here of an invented system.',
    '',
    `Run: ${s.quick ? 'quick (reduced frame counts)' : 'full'}, ${s.seconds.toFixed(0)} s. Route: Clausius–Mossotti (reference ε → α_CM, learnt as a sum of atomic`,
    `contributions, converted back). Settings: ${describeSettings(s.model.settings)}.`,
    'Every "%" below is an error relative to the spread of the reference (RMSE / standard deviation), as `polarweave validate` reports it.',
    '',
    `## Liquid: ${report.folds}-fold cross-validation (${s.liquid.length} frames)`,
    ...(sp
      ? [
          `- ε within state points (${sp.groups.length} state points, by ${sp.what}; the headline figure: how well the model learns within a state): ${errorLine(sp.within)}`,
          ...sp.groups.map((g) => `  - ${g.label}: ${errorLine(g.errors)}`),
          `- ε over all frames (the spread includes the differences between the state points, which flatters this figure): ${errorLine(report.errors)}`,
        ]
      : [`- ε: ${errorLine(report.errors)}`]),
    ...(report.alsoOn ?? []).map((a) => `- ${a.target.replace(/ \(Å³\)$/, '')} over all frames: ${errorLine(a.errors, ' Å³')}`),
    `- verdict (rule of thumb, on ε ${head.what}): ${verdict(head.errors)}`,
    '',
    `| training frames | ε isotropic: % of the spread | ε anisotropic: % of the spread |`,
    '|---|---|---|',
    ...report.learningCurve.map((p) => `| ${p.trainSize} | ${curveCell(p.errors.percentIso, p.spread?.percentIso, p.repeats)} | ${curveCell(p.errors.percentAniso, p.spread?.percentAniso, p.repeats)} |`),
    `| ${full} (full fold, one split) | ${fmtPct(report.errors.percentIso)} | ${fmtPct(report.errors.percentAniso)} |`,
    '',
    ...(report.learningCurve[0]?.repeats && report.learningCurve[0].repeats > 1 ? [`Learning curve: mean ± standard deviation over ${report.learningCurve[0].repeats} random splits at each size (all frames, state points mixed). ${report.curveTrend ?? ''}`, ''] : report.curveTrend ? [report.curveTrend, ''] : []),
    `## Crystal: model trained on the ${s.liquid.length} liquid frames, ${s.crystal.length} crystal frames predicted`,
    `- ε against the reference: RMSE of the isotropic value tr/3 ${g2(s.crystalErrors.rmseIso)}, of the anisotropy ${g2(s.crystalErrors.rmseAniso)} (the crystal's frames differ so little that an error relative to their spread says nothing here; values below are rounded at the decimal of these errors)`,
    `- mean ε diagonal: predicted ${diag(s.predictedMean, epsErr)}; reference ${diag(s.referenceMean, epsErr)}`,
    `- principal refractive indices: predicted ${n(s.predictedMean)}; reference ${n(s.referenceMean)}`,
    `- birefringence n_max − n_min: predicted ${withError(dnPred, dnErr)}; reference ${withError(dnRef, dnErr)} — ${birefringenceComment(dnPred, dnRef, dnErr, s.outsideFrames, s.crystal.length)}`,
    `- mean α_CM diagonal (Å³): predicted ${diag(cmPred, cmErr)}; reference ${diag(cmRef, cmErr)}`,
    `- applicability: ${s.outsideFrames} of ${s.crystal.length} frames flagged outside the training data (${atomsOut} of ${atoms} atoms; largest feature-space distance ${g2(maxDist)}; thresholds per centre species: ${s.model.centres.map((c, k) => `${c} ${g2(s.model.applicability.perSpecies[k])}`).join(', ')})`,
    '',
    '## Files',
    `- ${s.files.csv}: predicted ε and α_CM of each crystal frame, with the reference (eps_ref_*), the differences and the applicability figures`,
    `- ${s.files.model}: the trained model (load it with \`polarweave predict\`)`,
    `- ${s.files.validation}: cross-validation parity points and learning curve`,
    `- ${s.files.clusters}: the clusters of the exercise below, without cells, with their polarisability in vacuum (alpha_mol_ref_A3): open them in the window and train them as the isolated molecules' polarisability, then predict the liquid trajectory in Transfer`,
    '',
  ];
  return lines.join('\n');
}

/** What the birefringence error teaches: the anisotropy is what transfers worst from liquid to crystal. */
export function birefringenceComment(predicted: number, reference: number, error: number, outside: number, frames: number): string {
  const diff = predicted - reference;
  const ratio = predicted / reference;
  if (Math.abs(diff) <= error) return 'the model gets the crystal’s birefringence right within its error.';
  return (
    `the model ${diff > 0 ? 'overestimates' : 'underestimates'} the crystal’s birefringence by ${g2(Math.abs(diff))} (${ratio.toFixed(2)} times the reference). ` +
    'Birefringence comes from the anisotropy, the part the liquid teaches least: in the liquid the molecules point every way and ' +
    'their anisotropic contributions mostly average out, while the layered crystal aligns them' +
    (outside > 0 ? ` (and ${outside} of ${frames} crystal frames lie outside the training data)` : '') +
    '. Treat a transferred birefringence as an estimate to check with a few crystal references.'
  );
}
