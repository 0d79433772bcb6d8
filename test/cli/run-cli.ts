// Runs the CLI in-process with captured output, for tests.
import { runCli } from '../../src-main/cli/main.ts';

export interface CliResult {
  code: number;
  out: string;
  err: string;
}

export async function cli(...argv: string[]): Promise<CliResult> {
  let out = '';
  let err = '';
  const code = await runCli(argv, {
    out: (t) => (out += t),
    err: (t) => (err += t),
    signal: new AbortController().signal,
  });
  return { code, out, err };
}
