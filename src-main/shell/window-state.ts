// What the shell remembers between runs: the window's bounds, whether it was maximised, and recent files.
// A small JSON file in the user's app-data folder, written atomically; a damaged file is ignored.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { z } from 'zod';
import { writeFileAtomic } from '../io/atomic.ts';

const schema = z.object({
  bounds: z.object({ x: z.number().int(), y: z.number().int(), width: z.number().int().min(400), height: z.number().int().min(300) }).nullable(),
  maximised: z.boolean(),
  recent: z.array(z.string()).max(20),
});

export type ShellState = z.infer<typeof schema>;

const MAX_RECENT = 10;

export class ShellMemory {
  private readonly file: string;
  state: ShellState = { bounds: null, maximised: false, recent: [] };

  constructor(userDataDir: string) {
    this.file = join(userDataDir, 'window-state.json');
    try {
      const r = schema.safeParse(JSON.parse(readFileSync(this.file, 'utf8')));
      if (r.success) this.state = r.data;
    } catch {
      /* first run, or unreadable: start fresh */
    }
  }

  addRecent(path: string): void {
    this.state.recent = [path, ...this.state.recent.filter((p) => p !== path)].slice(0, MAX_RECENT);
  }

  async save(): Promise<void> {
    await writeFileAtomic(this.file, JSON.stringify(this.state, null, 2));
  }
}
