/**
 * One job = one core, for V8 too. A batch keeps every core busy with its own jobs, and V8's background
 * threads (concurrent and parallel garbage collection, background optimising compiles) would then compete
 * with them: measured on a 2-core machine without these flags, one batch job alone kept 1.2 cores busy
 * and two jobs gained only about 1.35× over one (with them: docs/benchmarks.md, "Batch throughput").
 * V8 reads these flags once, when the process starts (changing the garbage collector's threading
 * afterwards, with v8.setFlagsFromString, aborts the process), so `rankfold batch` starts itself again
 * with them, in the same way libvips is held to one thread per job (the batch's `libvipsThreads: 1`,
 * applied around the run by src-main/node/image/libvips-threads.ts).
 *
 * The launcher only relays: the child inherits stdin/stdout/stderr (the progress bar still sees the
 * terminal), every SIGINT/SIGTERM/SIGHUP the launcher gets is passed on, and the launcher exits with the
 * child's code. The child sits in its own process group so a Ctrl-C reaches it once, through the launcher.
 * If the launcher is killed outright (SIGKILL), the child notices its IPC channel close and stops at once
 * the same way, so a kill of the command is a kill of the batch and `--resume` finishes the work.
 */
import { spawn } from 'node:child_process';
import { constants } from 'node:os';

/** V8 flags for a batch process: garbage collection and optimising compiles on the job's own thread. */
export const BATCH_V8_FLAGS = ['--single-threaded-gc', '--no-concurrent-recompilation'] as const;

/** Set in the child's environment; also lets a user turn the relaunch off (`RANKFOLD_RELAUNCHED=1`). */
export const RELAUNCHED_ENV = 'RANKFOLD_RELAUNCHED';

/** True when this command line runs batch jobs and this process was not started with the batch flags. */
export function needsBatchRelaunch(
  argv: readonly string[],
  execArgv: readonly string[],
  env: NodeJS.ProcessEnv,
): boolean {
  if (argv[0] !== 'batch' || env[RELAUNCHED_ENV]) return false;
  // These run no jobs: help, a dry run, and merging manifests.
  if (argv.some((a) => a === '--help' || a === '-h' || a === '--dry-run' || a === '--merge')) return false;
  return !BATCH_V8_FLAGS.every((f) => execArgv.includes(f));
}

/**
 * Run this same script again in a child process with `flags` added to Node's own options, relay signals,
 * and resolve with the exit code to use (128 + signal number when the child was killed by a signal).
 * If the child cannot be started at all, say so and run `fallback` in this process instead.
 */
export function relaunch(
  script: string,
  args: readonly string[],
  flags: readonly string[],
  fallback: () => Promise<number>,
  node = process.execPath,
): Promise<number> {
  const child = spawn(node, [...flags, ...process.execArgv, script, ...args], {
    stdio: ['inherit', 'inherit', 'inherit', 'ipc'],
    env: { ...process.env, [RELAUNCHED_ENV]: '1' },
    detached: process.platform !== 'win32',
  });
  const signals: NodeJS.Signals[] = ['SIGINT', 'SIGTERM', 'SIGHUP'];
  const relay = (sig: NodeJS.Signals) => {
    if (child.exitCode === null && child.signalCode === null) child.kill(sig);
  };
  for (const s of signals) process.on(s, relay);
  return new Promise((resolve) => {
    const done = (code: number) => {
      for (const s of signals) process.removeListener(s, relay);
      resolve(code);
    };
    let spawned = false;
    child.on('spawn', () => {
      spawned = true;
    });
    child.on('error', (err) => {
      if (spawned) return;
      // No second process to be had (process limit, memory): run the batch here, with V8's defaults.
      process.stderr.write(
        `rankfold: cannot start the batch process (${err.message}); running in this one instead\n`,
      );
      for (const s of signals) process.removeListener(s, relay);
      fallback().then(resolve, () => resolve(1));
    });
    child.on('exit', (code, signal) => {
      done(code ?? 128 + (signal ? (constants.signals[signal] ?? 0) : 0));
    });
  });
}

/** In a relaunched child: stop at once if the launcher goes away (it was killed, so the batch is too). */
export function followLauncher(): void {
  if (!process.env[RELAUNCHED_ENV] || typeof process.send !== 'function') return;
  process.on('disconnect', () => process.kill(process.pid, 'SIGKILL'));
  // The channel must not keep the process alive once the batch has finished.
  process.channel?.unref();
}
