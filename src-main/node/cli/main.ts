/**
 * `rankfold` command-line entry. Each sub-command lives in ./commands/<name>.ts and is loaded on demand.
 * Exit codes: 0 success, 1 usage or input error, 2 partial failure (batch). See docs/cli.md.
 */
import { RankfoldError, UsageError } from '../../contract';
import type { CliIO, Command } from './args/command';
import { startEarly } from './args/early-start';
import { BATCH_V8_FLAGS, followLauncher, needsBatchRelaunch, relaunch } from './relaunch';

/** Each sub-command's one-line summary, in the order the general help lists them. */
const summaries: Record<string, string> = {
  inspect: 'show size, depth and the singular-value spectrum of a scan',
  compress: 'write a .rkf file that meets a storage budget or quality floor',
  expand: 'decode a .rkf file back to PNG or TIFF',
  clean: 'remove sensor noise and row/column banding, and show what was removed',
  batch: 'compress a whole folder unattended, with a report',
  serve: 'open the app in a browser on this machine (127.0.0.1 only)',
};

/** Each sub-command's module, loaded on demand. */
const loaders: Record<string, () => Promise<{ command: Command }>> = {
  inspect: () => import('./commands/inspect'),
  compress: () => import('./commands/compress'),
  expand: () => import('./commands/expand'),
  clean: () => import('./commands/clean'),
  batch: () => import('./commands/batch'),
  serve: () => import('./commands/serve'),
};

const VERSION = '0.1.0';

function generalHelp(): string {
  const width = Math.max(...Object.keys(summaries).map((c) => c.length));
  const lines = Object.entries(summaries).map(([name, summary]) => `  ${name.padEnd(width)}  ${summary}`);
  return [
    'Rankfold: compress and clean scans with truncated singular value decomposition.',
    '',
    'Usage: rankfold <command> [options]',
    '',
    'Commands:',
    ...lines,
    '',
    'Run `rankfold <command> --help` for the options of one command.',
    '',
    'Lossy compression and cleaning change pixel data. Keep preservation masters lossless; medical,',
    "forensic and legal images need your institution's approval. Follow your local digitisation guidelines.",
    '',
  ].join('\n');
}

export async function main(argv: string[], io: CliIO): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    io.stdout(generalHelp());
    return name === undefined ? 1 : 0;
  }
  if (name === '--version' || name === '-V') {
    io.stdout(`${VERSION}\n`);
    return 0;
  }
  const load = Object.hasOwn(loaders, name) ? loaders[name] : undefined;
  if (!load) {
    io.stderr(`rankfold: unknown command "${name}". Commands: ${Object.keys(loaders).join(', ')}.\n`);
    return 1;
  }
  // Before the command's modules load: the side thread then loads on the other core meanwhile.
  const early = await startEarly(name, rest);
  try {
    const { command } = await load();
    if (rest.includes('--help') || rest.includes('-h')) {
      const help = command.helpFor ? await command.helpFor(rest) : command.help;
      io.stdout(help.endsWith('\n') ? help : `${help}\n`);
      return 0;
    }
    return await command.run(rest, io, early);
  } catch (err) {
    if (err instanceof UsageError) {
      io.stderr(`rankfold ${name}: ${err.message}\n`);
      return 1;
    }
    if (err instanceof RankfoldError) {
      io.stderr(`rankfold ${name}: ${err.message}\n`);
      return 1;
    }
    const e = err as Error;
    io.stderr(
      `rankfold ${name}: unexpected internal error: ${e?.message ?? String(err)}\n${process.env.RANKFOLD_DEBUG ? `${e?.stack}\n` : ''}`,
    );
    return 1;
  } finally {
    // The arena's touch, if the command left it running (it ends within one pool request), and the side.
    await Promise.all([early.arena?.touch.stop(), early.side?.close()]);
  }
}

const isEntry = process.argv[1] && /(?:rankfold(?:\.mjs)?|cli\.js)$/.test(process.argv[1]);
if (isEntry) {
  const io: CliIO = {
    stdout: (t) => process.stdout.write(t),
    stderr: (t) => process.stderr.write(t),
    isTTY: Boolean(process.stderr.isTTY),
  };
  const argv = process.argv.slice(2);
  const relaunched = needsBatchRelaunch(argv, process.execArgv, process.env);
  if (!relaunched) followLauncher();
  const started = relaunched
    ? relaunch(process.argv[1], argv, BATCH_V8_FLAGS, () => main(argv, io))
    : main(argv, io);
  started.then(
    (code) => {
      process.exitCode = code;
    },
    (err) => {
      process.stderr.write(`rankfold: ${String(err)}\n`);
      process.exitCode = 1;
    },
  );
}
