/** What a command may touch of the outside world; tests pass their own. */
export interface CliIo {
  stdout: { write(text: string): unknown; isTTY?: boolean };
  stderr: { write(text: string): unknown; isTTY?: boolean };
  env: Record<string, string | undefined>;
  cwd: string;
}

export const processIo = (): CliIo => ({
  stdout: process.stdout,
  stderr: process.stderr,
  env: process.env,
  cwd: process.cwd(),
});

/** Exit codes of vibgate (design.md, "Contracts other tools rely on"). */
export const ExitCode = {
  /** Every recording passed (warnings allowed) / every recording was read. */
  ok: 0,
  /** The gate failed, or a recording could not be read. */
  failed: 1,
  /** Usage or rule-file error: nothing was screened. */
  usage: 2,
} as const;
