import { execFileSync } from 'node:child_process';

/** Whether an outside reference tool is on PATH. In CI it must be (`.ci/run` installs it). */
export function hasTool(name: string): boolean {
  try {
    execFileSync('sh', ['-c', `command -v ${name}`], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  }
}

/** Skip a reference-tool test on a developer machine without the tool, never in CI. */
export const skipWithout = (name: string): boolean => !hasTool(name) && !process.env.CI;
