// The window's state (Svelte 5 runes): what is open, what is selected, the running job, the last error,
// and the display preferences. Components read it; actions here talk to the client.
import type { ApiError, AppState, JobKind, JobStatus, ModelSummary, PredictionSummary } from '../../src-main/api/contract.ts';
import { CallError, type Client } from './client.ts';

export type ViewName = 'data' | 'model' | 'checks' | 'structure' | 'trajectory' | 'transfer' | 'export';

export const views: { id: ViewName; label: string; hint: string }[] = [
  { id: 'data', label: 'Data', hint: 'files, frames, cells and tensors' },
  { id: 'model', label: 'Model', hint: 'settings and training' },
  { id: 'checks', label: 'Checks', hint: 'parity and learning curves' },
  { id: 'structure', label: 'Structure', hint: 'local polarisability ellipsoids' },
  { id: 'trajectory', label: 'Trajectory', hint: 'ε along the frames' },
  { id: 'transfer', label: 'Transfer', hint: 'predict another phase' },
  { id: 'export', label: 'Export', hint: 'CSV, figures, model, project' },
];

export interface RunningJob {
  id: string;
  kind: JobKind;
  label: string;
  state: JobStatus['state'];
  stage: string;
  done: number;
  total: number;
  started: number;
}

export interface ShownError {
  title: string;
  error: ApiError;
}

function readPref(key: string, fallback: string): string {
  try {
    return localStorage.getItem(key) ?? fallback;
  } catch {
    return fallback;
  }
}

function writePref(key: string, value: string): void {
  try {
    localStorage.setItem(key, value);
  } catch {
    /* storage refused (private window): keep the preference for this session only */
  }
}

class AppStore {
  client: Client | null = null;
  state: AppState = $state({ defaultSettings: null as unknown as AppState['defaultSettings'], datasets: [], models: [], predictions: [], jobs: [] });
  view: ViewName = $state('data');
  datasetId: string | null = $state(null);
  frameIndex = $state(0);
  modelId: string | null = $state(null);
  /** Prediction of the training data (structure and trajectory views). */
  predictionId: string | null = $state(null);
  /** Prediction of another phase (transfer view). */
  transferId: string | null = $state(null);
  job: RunningJob | null = $state(null);
  error: ShownError | null = $state(null);
  notice: string | null = $state(null);
  /** What the session held when it was last saved or opened as a project (ids of files, models, predictions). */
  savedContent: string | null = $state(null);

  /** The session's content, to tell whether it changed since it was saved. */
  contentKey(): string {
    const s = this.state;
    return [...s.datasets.map((d) => d.id), '|', ...s.models.map((m) => m.id), '|', ...s.predictions.map((p) => p.id)].join(',');
  }

  /**
   * What would be lost if the session were replaced now, in words; null when nothing (empty, or unchanged since
   * it was saved or opened).
   */
  unsavedWork(): string | null {
    const s = this.state;
    const n = s.datasets.length + s.models.length + s.predictions.length;
    if (n === 0 || this.contentKey() === this.savedContent) return null;
    const part = (k: number, one: string) => (k ? `${k} ${one}${k === 1 ? '' : 's'}` : '');
    return [part(s.datasets.length, 'file'), part(s.models.length, 'model'), part(s.predictions.length, 'prediction')].filter(Boolean).join(', ');
  }
  theme: 'light' | 'dark' = $state(readPref('pw-theme', 'light') === 'dark' ? 'dark' : 'light');
  largeText: boolean = $state(readPref('pw-large', '0') === '1');
  busy = $state(false);

  private models = new Map<string, ModelSummary>();
  private predictions = new Map<string, PredictionSummary>();
  /** Bumped whenever a model or prediction is (re)fetched, so derived views refresh. */
  revision = $state(0);

  setTheme(t: 'light' | 'dark') {
    this.theme = t;
    writePref('pw-theme', t);
  }

  setLargeText(on: boolean) {
    this.largeText = on;
    writePref('pw-large', on ? '1' : '0');
  }

  showError(title: string, e: unknown) {
    const error: ApiError = e instanceof CallError ? e.error : { name: 'Error', message: e instanceof Error ? e.message : String(e) };
    this.error = { title, error };
  }

  get api(): Client {
    if (!this.client) throw new Error('no connection to the computation');
    return this.client;
  }

  async refresh() {
    this.state = await this.api.call('getState', {});
    if (this.datasetId && !this.state.datasets.some((d) => d.id === this.datasetId)) this.datasetId = null;
    if (!this.datasetId && this.state.datasets.length) this.datasetId = this.state.datasets[0].id;
    if (this.modelId && !this.state.models.some((m) => m.id === this.modelId)) this.modelId = null;
    if (!this.modelId && this.state.models.length) this.modelId = this.state.models.at(-1)!.id;
    for (const m of this.state.models) this.models.set(m.id, m);
    this.revision++;
  }

  /** Runs an action, showing a plain error if it fails. */
  async attempt<T>(title: string, action: () => Promise<T>): Promise<T | undefined> {
    this.busy = true;
    try {
      const v = await action();
      this.error = null;
      return v;
    } catch (e) {
      this.showError(title, e);
      return undefined;
    } finally {
      this.busy = false;
    }
  }

  model(id: string | null): ModelSummary | null {
    void this.revision;
    return id ? (this.models.get(id) ?? this.state.models.find((m) => m.id === id) ?? null) : null;
  }

  async prediction(id: string | null): Promise<PredictionSummary | null> {
    if (!id) return null;
    const cached = this.predictions.get(id);
    if (cached) return cached;
    const p = await this.api.call('getPrediction', { predictionId: id });
    this.predictions.set(id, p);
    return p;
  }

  async loadDemo() {
    await this.attempt('Could not load the demo', async () => {
      const before = new Set(this.state.datasets.map((d) => d.id));
      this.state = await this.api.call('loadDemo', {});
      const added = this.state.datasets.filter((d) => !before.has(d.id));
      const first = added[0] ?? this.state.datasets[0];
      if (first) this.datasetId = first.id;
      this.frameIndex = 0;
      this.notice = added.length ? `Demo loaded: ${added.map((d) => d.name).join(', ')} (made-up data from a point-dipole model, for learning the app).` : 'The demo is already open.';
    });
  }

  /** Starts a job and follows it until it settles; resolves with its final status. */
  async runJob(kind: JobKind, label: string, start: () => Promise<{ jobId: string }>): Promise<JobStatus | null> {
    if (this.job && (this.job.state === 'running' || this.job.state === 'queued')) {
      this.notice = 'Another job is still running; wait for it or cancel it first.';
      return null;
    }
    let jobId: string;
    try {
      jobId = (await start()).jobId;
    } catch (e) {
      this.showError(`Could not start: ${label}`, e);
      return null;
    }
    this.error = null;
    this.job = { id: jobId, kind, label, state: 'running', stage: 'starting', done: 0, total: 1, started: Date.now() };
    let since = 0;
    for (;;) {
      await new Promise((r) => setTimeout(r, 150));
      let s: JobStatus;
      try {
        s = await this.api.call('jobStatus', { jobId, since });
      } catch (e) {
        this.showError(`Lost track of: ${label}`, e);
        this.job = null;
        return null;
      }
      since = s.events.at(-1)?.seq ?? since;
      if (this.job && this.job.id === jobId) {
        this.job.state = s.state;
        if (s.progress) {
          this.job.stage = s.progress.stage;
          this.job.done = s.progress.done;
          this.job.total = s.progress.total;
        }
      }
      if (s.state === 'done' || s.state === 'failed' || s.state === 'cancelled') {
        if (s.state === 'failed' && s.error) this.error = { title: `${label} failed`, error: s.error };
        if (s.state === 'cancelled') this.notice = `${label}: cancelled; nothing was kept.`;
        await this.refresh();
        if (s.result?.kind === 'predict') this.predictions.set(s.result.prediction.id, s.result.prediction);
        setTimeout(() => {
          if (this.job?.id === jobId) this.job = null;
        }, s.state === 'done' ? 1200 : 0);
        return s;
      }
    }
  }

  async cancelJob() {
    if (!this.job) return;
    const id = this.job.id;
    await this.attempt('Could not cancel', () => this.api.call('cancelJob', { jobId: id }));
  }
}

export const app = new AppStore();
