/**
 * The CLI's `main` run inside the test process, its stdout and stderr caught
 * as text, for tests that need no child process (no dist/ build, no spawn).
 */
import { vi } from 'vitest';
import { main } from '../../workers/cli-program.js';

export interface InProcessRun { code: number; stdout: string; stderr: string }

/** Run `heatledger <argv…>` in this process and return its exit code and output. */
export async function runCliInProcess(argv: string[]): Promise<InProcessRun> {
  let stdout = '';
  let stderr = '';
  vi.spyOn(process.stdout, 'write').mockImplementation((s: string | Uint8Array) => { stdout += String(s); return true; });
  vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => { stderr += String(s); return true; });
  try {
    return { code: await main(['node', 'heatledger', ...argv]), stdout, stderr };
  } finally {
    vi.restoreAllMocks();
  }
}
