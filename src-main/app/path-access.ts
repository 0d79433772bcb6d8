// Which files on disk the app service may read by path: the ones the user chose (a dialog, a drop, the command
// line) and anything inside a folder given at start. A page that talks to the service (the browser host's
// token holder, a window showing hostile content) can name any path; without this it could read any structure
// file on the machine. A refused path is refused before the file system is touched, with one message whatever
// the path, so the answer tells nothing about which files exist.
import { realpath } from 'node:fs/promises';
import { basename, resolve, sep } from 'node:path';
import { InputError } from '../core/errors.ts';

export class PathAccess {
  private readonly files = new Set<string>();
  private readonly folders: string[] = [];

  constructor(options: { files?: string[]; folders?: string[] } = {}) {
    for (const f of options.files ?? []) this.grantFile(f);
    for (const d of options.folders ?? []) this.grantFolder(d);
  }

  /** A file the user chose: readable by path from now on. */
  grantFile(path: string): void {
    this.files.add(resolve(path));
  }

  /** A folder given at start: every file inside it (after resolving links) is readable. */
  grantFolder(path: string): void {
    this.folders.push(resolve(path));
  }

  private inFolder(path: string, folders: string[]): boolean {
    return folders.some((d) => path === d || path.startsWith(d.endsWith(sep) ? d : d + sep));
  }

  /** Throws InputError ("cannot open") unless `path` was granted; returns the resolved path to read. */
  async check(path: string): Promise<string> {
    const refuse = (): never => {
      throw new InputError(`cannot open '${basename(path).slice(0, 60)}'`, {}, 'open the file yourself (File ▸ Open, drag and drop), or start the app with its folder');
    };
    const p = resolve(path);
    if (this.files.has(p)) return p;
    if (!this.inFolder(p, this.folders)) refuse();
    // inside a granted folder by name: follow links, and stay inside by what they point to
    const real = await realpath(p).catch(() => null);
    const roots = await Promise.all(this.folders.map((d) => realpath(d).catch(() => d)));
    if (real === null || !this.inFolder(real, roots)) refuse();
    return p;
  }
}
