// The CSV of predicted tensors the Export view writes (one row per frame).
// TODO(h-io csv.ts): switch to tensorCsv so the window's file matches the CLI's byte for byte.
import type { FramePredictionJ, TensorKindJ } from './api.ts';
import type { Frame } from './core/frame.ts';

export function predictionsCsv(frames: FramePredictionJ[], tensor: TensorKindJ, _context: { dataset: string; model: string; frames: Frame[] }): string {
  const pick = (f: FramePredictionJ) => (tensor === 'eps' ? f.eps : tensor === 'alpha-c' ? f.alphaC : f.alphaCM);
  const head = ['frame', 'xx', 'xy', 'xz', 'yx', 'yy', 'yz', 'zx', 'zy', 'zz'];
  const rows = frames.map((f) => [String(f.frame), ...pick(f).map((v) => String(v))].join(','));
  return [head.join(','), ...rows].join('\n') + '\n';
}
