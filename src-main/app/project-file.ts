// The project file: our own versioned JSON format holding a session's data sources, models (as model-file
// text), predictions and window settings. Read back with a schema, so a damaged or foreign file gives a
// plain error instead of a half-loaded session.
import { z } from 'zod';
import type { FramePredictionJ, ModelSummary, PredictionSummary } from '../api/contract.ts';
import { InputError } from '../core/errors.ts';
import { MAX_JSON_DEPTH } from '../core/limits.ts';
import { jsonTooDeep } from '../io/json-depth.ts';

export const PROJECT_FORMAT = 'polarweave-project';
export const PROJECT_VERSION = 1;

const origin = z.discriminatedUnion('kind', [
  z.object({ kind: z.literal('demo'), file: z.string().regex(/^[A-Za-z0-9._-]+$/) }),
  z.object({ kind: z.literal('path'), path: z.string().min(1) }),
  z.object({ kind: z.literal('embedded'), name: z.string().min(1), text: z.string() }),
]);

const projectSchema = z.object({
  format: z.literal(PROJECT_FORMAT),
  version: z.number().int(),
  savedAt: z.string(),
  datasets: z.array(z.object({ id: z.string(), name: z.string(), origin })),
  models: z.array(z.object({ summary: z.custom<ModelSummary>((v) => !!v && typeof v === 'object' && typeof (v as ModelSummary).id === 'string'), model: z.string() })),
  predictions: z.array(
    z.object({
      summary: z.custom<PredictionSummary>((v) => !!v && typeof v === 'object' && Array.isArray((v as PredictionSummary).frames)),
      route: z.enum(['cm', 'direct']),
      local: z.array(z.array(z.number())),
      atomDistance: z.array(z.array(z.number())),
      /** Per-atom domain scores; absent in projects saved before they were kept. */
      atomScore: z.array(z.array(z.number())).optional(),
    }),
  ),
  ui: z.record(z.string(), z.unknown()).optional(),
});

export type ProjectFile = z.infer<typeof projectSchema>;
export type ProjectDataset = ProjectFile['datasets'][number];
export type { FramePredictionJ };

export function parseProject(text: string, fileName: string): ProjectFile {
  if (jsonTooDeep(text)) throw new InputError(`not a project file (JSON nested deeper than ${MAX_JSON_DEPTH} levels)`, { file: fileName }, 'open a .pwproj.json file saved by Polarweave');
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(`not a project file (not JSON: ${(e as Error).message})`, { file: fileName }, 'open a .pwproj.json file saved by Polarweave');
  }
  const head = raw as { format?: unknown; version?: unknown } | null;
  if (!head || head.format !== PROJECT_FORMAT) {
    throw new InputError('not a Polarweave project file (no "format": "polarweave-project")', { file: fileName }, 'open a .pwproj.json file saved by Polarweave');
  }
  if (typeof head.version !== 'number' || head.version > PROJECT_VERSION) {
    throw new InputError(`project format version ${String(head.version)} is newer than this app reads (${PROJECT_VERSION})`, { file: fileName }, 'update Polarweave');
  }
  const r = projectSchema.safeParse(raw);
  if (!r.success) {
    const issue = r.error.issues[0];
    throw new InputError(`damaged project file: ${issue.path.join('.')}: ${issue.message}`, { file: fileName }, 'save the project again from the app');
  }
  return r.data;
}
