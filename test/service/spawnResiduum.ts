import { spawn, type ChildProcess } from 'node:child_process';
import { fileURLToPath } from 'node:url';

/** The repository root (where bin/residuum.js lives). */
export const repoRoot = fileURLToPath(new URL('../../', import.meta.url));
/** The CLI entry: registers tsx, then runs src/cli.ts. */
export const residuumBin = fileURLToPath(new URL('../../bin/residuum.js', import.meta.url));

export interface ChildExit {
  readonly code: number | null;
  readonly signal: NodeJS.Signals | null;
}

/** A child process with its output kept (as bytes, so that a scan sees exactly what it wrote). */
export interface RunningChild {
  readonly child: ChildProcess;
  /** Everything written to stdout so far. */
  stdout(): Buffer;
  /** Everything written to stderr so far. */
  stderr(): Buffer;
  /** Resolves with the first match of `pattern` in stdout; rejects after `timeoutMs` or when the child exits first. */
  waitForOutput(pattern: RegExp, timeoutMs: number): Promise<RegExpExecArray>;
  /** Resolves when the child has exited and its output streams are closed. */
  readonly exited: Promise<ChildExit>;
  /** Waits up to `timeoutMs` for the exit; then kills it (SIGKILL) and rejects. */
  exit(timeoutMs: number): Promise<ChildExit>;
}

export interface SpawnOptions {
  readonly cwd?: string;
  readonly env?: NodeJS.ProcessEnv;
}

/** Runs `node <args…>` with stdout and stderr captured. */
export function spawnNode(args: readonly string[], options: SpawnOptions = {}): RunningChild {
  const { cwd = repoRoot, env = process.env } = options;
  const child = spawn(process.execPath, args, { cwd, env, stdio: ['ignore', 'pipe', 'pipe'] });
  const out: Buffer[] = [];
  const err: Buffer[] = [];
  const listeners = new Set<() => void>();
  let ended = false;
  child.stdout!.on('data', (chunk: Buffer) => {
    out.push(chunk);
    for (const l of listeners) l();
  });
  child.stderr!.on('data', (chunk: Buffer) => err.push(chunk));
  const exited = new Promise<ChildExit>((done, fail) => {
    child.once('error', fail);
    child.once('close', (code, signal) => {
      ended = true;
      for (const l of listeners) l();
      done({ code, signal });
    });
  });
  const stdout = () => Buffer.concat(out);
  const stderr = () => Buffer.concat(err);
  return {
    child,
    stdout,
    stderr,
    exited,
    waitForOutput(pattern, timeoutMs) {
      return new Promise((done, fail) => {
        const check = () => {
          const match = pattern.exec(stdout().toString('utf8'));
          if (match) finish(() => done(match));
          else if (ended) finish(() => fail(new Error(`the child exited before printing ${pattern}; stderr:\n${stderr().toString('utf8')}`)));
        };
        const timer = setTimeout(() => finish(() => fail(new Error(`no ${pattern} on stdout within ${timeoutMs} ms; stderr:\n${stderr().toString('utf8')}`))), timeoutMs);
        const finish = (settle: () => void) => {
          clearTimeout(timer);
          listeners.delete(check);
          settle();
        };
        listeners.add(check);
        check();
      });
    },
    async exit(timeoutMs) {
      let timer: NodeJS.Timeout | undefined;
      const timeout = new Promise<never>((_, fail) => {
        timer = setTimeout(() => {
          child.kill('SIGKILL');
          fail(new Error(`the child did not exit within ${timeoutMs} ms (killed); stdout:\n${stdout().toString('utf8')}\nstderr:\n${stderr().toString('utf8')}`));
        }, timeoutMs);
      });
      try {
        return await Promise.race([exited, timeout]);
      } finally {
        clearTimeout(timer);
      }
    },
  };
}

/** Runs `node bin/residuum.js <args…>`. */
export function spawnResiduum(args: readonly string[], options: SpawnOptions = {}): RunningChild {
  return spawnNode([residuumBin, ...args], options);
}
