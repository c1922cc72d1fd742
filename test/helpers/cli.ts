import { main } from '../../src/cli/main.js';
import type { CliIo } from '../../src/cli/io.js';

/** Runs `vibgate ARGS` in-process and captures what it writes. */
export async function runCli(args: string[], env: Record<string, string | undefined> = {}) {
  let stdout = '';
  let stderr = '';
  const io: CliIo = {
    stdout: { write: (s: string) => { stdout += s; return true; }, isTTY: false },
    stderr: { write: (s: string) => { stderr += s; return true; }, isTTY: false },
    env: { NO_COLOR: '1', ...env },
    cwd: process.cwd(),
  };
  const code = await main(args, io);
  return { code, stdout, stderr };
}
