// Learning curves from repeated random splits: at each training-set size, several random subsets of each
// fold's training frames are drawn, and the held-out error figures are averaged, with their spread (standard
// deviation over the repeats) as the error bar. One split goes up and down by chance; the caption that says
// whether more data would help follows the slope of the last points against that spread. Pure and browser-safe:
// the window's caption is this function's text, as `polarweave validate` prints it.
import type { CurvePoint, ErrorFigures, ErrorSpread } from './model-types.ts';

export type { CurvePoint, ErrorSpread };

/** Repeats of the random subsets at each learning-curve size (the full fold is the main cross-validation). */
export const CURVE_REPEATS = 3;

const FIELDS = ['percentIso', 'percentAniso', 'rmseIso', 'rmseAniso'] as const;

/** The mean figures of several repeats and their spread (sample standard deviation). */
export function meanOfRepeats(trainSize: number, repeats: ErrorFigures[]): CurvePoint {
  const n = repeats.length;
  const mean = (f: keyof ErrorFigures) => repeats.reduce((a, r) => a + r[f], 0) / n;
  const sd = (f: keyof ErrorFigures) => {
    if (n < 2) return 0;
    const m = mean(f);
    return Math.sqrt(repeats.reduce((a, r) => a + (r[f] - m) ** 2, 0) / (n - 1));
  };
  const errors: ErrorFigures = { rmseIso: mean('rmseIso'), rmseAniso: mean('rmseAniso'), percentIso: mean('percentIso'), percentAniso: mean('percentAniso'), r2Iso: mean('r2Iso'), r2Aniso: mean('r2Aniso'), count: repeats[0].count };
  const spread = Object.fromEntries(FIELDS.map((f) => [f, sd(f)])) as unknown as ErrorSpread;
  return { trainSize, errors, spread, repeats: n };
}

export type CurveTrend = 'falling' | 'flat' | 'rising' | 'unknown';

/**
 * Whether the error still falls at the largest training sets: the worse of the isotropic and anisotropic
 * relative errors at the last two sizes (the full fold last, when given), compared with twice their combined
 * spread. With one split and no spread, a change of under 10 % of the error counts as flat (common practice, no source).
 */
export function curveTrend(curve: readonly CurvePoint[], full?: CurvePoint): { trend: CurveTrend; text: string } {
  // the full fold counts only when larger than the curve's last size (a curve may end at the full fold itself)
  const last = curve.at(-1)?.trainSize ?? 0;
  const pts = [...curve, ...(full && full.trainSize > last ? [full] : [])].filter((p) => Number.isFinite(p.errors.percentIso) && Number.isFinite(p.errors.percentAniso));
  if (pts.length < 2) return { trend: 'unknown', text: 'Too few sizes to tell whether more data would help.' };
  const [a, b] = pts.slice(-2);
  const worst = (p: CurvePoint) => Math.max(p.errors.percentIso, p.errors.percentAniso);
  const sdOf = (p: CurvePoint) => (p.spread ? (p.errors.percentIso >= p.errors.percentAniso ? p.spread.percentIso : p.spread.percentAniso) : 0);
  const drop = worst(a) - worst(b);
  const noise = Math.sqrt(sdOf(a) ** 2 + sdOf(b) ** 2);
  const margin = noise > 0 ? 2 * noise : 0.1 * worst(a);
  const between = `from ${a.trainSize} to ${b.trainSize} training frames`;
  if (drop > margin) return { trend: 'falling', text: `Still falling ${between}: more training data of the same kind would likely help.` };
  if (drop < -margin) return { trend: 'rising', text: `Not falling ${between} (it rises by more than its spread): more of the same data is unlikely to help; check the settings or the data.` };
  return { trend: 'flat', text: `Flat ${between}, within the spread of the repeated splits: more of the same data is unlikely to help much; more varied data or other settings might.` };
}
