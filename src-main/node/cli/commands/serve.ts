import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { LOSSY_CAUTION, OPTIONS, parseOptionText, RankfoldError } from '../../../contract';
import { Backend } from '../../server/backend';
import { startServer } from '../../server/http';
import { type Command, parseCommandArgs } from '../args/command';

const help = `Usage: rankfold serve [--port P] [--no-open]

Open the Rankfold app in a web browser on this machine. The server listens on 127.0.0.1 only and
prints the page's address, with a token that changes every run, as the first line on stdout. Only a
page holding the token can use the server; files are read only when you open or choose them in the page.

Options:
  --port P     port to listen on, 1024–65535, or 0 for any free port (the default);
               the address printed on the first line carries the port actually used
  --no-open    do not open the default browser
  -h, --help   show this help

The demo scans offered in the page come from the samples/ folder of this installation, or from the
folder named by the environment variable RANKFOLD_SAMPLES_DIR.

Stop it with Ctrl+C.

${LOSSY_CAUTION}
`;

/** dist/ of this build: the CLI bundle lives at dist/cli.js. */
function distDir(): string {
  return dirname(fileURLToPath(import.meta.url));
}

/** Open a URL in the default browser; never fails when there is none. */
export function openBrowser(url: string, onFail: (msg: string) => void): void {
  const cmd = process.platform === 'darwin' ? 'open' : process.platform === 'win32' ? 'cmd' : 'xdg-open';
  const args = process.platform === 'win32' ? ['/c', 'start', '""', url] : [url];
  try {
    const child = spawn(cmd, args, { stdio: 'ignore', detached: true });
    child.on('error', () => onFail(`could not start ${cmd}; open the address above in your browser`));
    child.unref();
  } catch {
    onFail(`could not start ${cmd}; open the address above in your browser`);
  }
}

export const command: Command = {
  name: 'serve',
  summary: 'open the app in a browser on this machine (127.0.0.1 only)',
  help,
  async run(argv, io) {
    const { values } = parseCommandArgs(
      'serve',
      argv,
      { port: { type: 'string' }, 'no-open': { type: 'boolean' } },
      0,
    );
    // 0, as is usual for servers, asks the system for any free port (the printed address gives it).
    const text = values.port as string | undefined;
    const port = text === undefined || text.trim() === '0' ? 0 : parseOptionText(OPTIONS.port, text);
    const dist = distDir();
    const staticDir = join(dist, 'renderer');
    if (!existsSync(join(staticDir, 'index.html')))
      throw new RankfoldError(`${staticDir}: the page is not built; run \`npm run build\` first`);
    const samplesDir = process.env.RANKFOLD_SAMPLES_DIR ?? join(dist, '..', 'samples');
    const backend = new Backend({
      workersDir: join(dist, 'workers'),
      samplesDir: existsSync(samplesDir) ? samplesDir : undefined,
    });
    let running: Awaited<ReturnType<typeof startServer>>;
    try {
      running = await startServer({ port, staticDir, backend });
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      if (code === 'EADDRINUSE')
        throw new RankfoldError(`port ${port} is already in use; pass another --port or leave it out`);
      throw err;
    }
    io.stdout(`${running.url}\n`);
    io.stderr(`rankfold serve: listening on 127.0.0.1:${running.port} only. Press Ctrl+C to stop.\n`);
    if (!values['no-open']) openBrowser(running.url, (m) => io.stderr(`rankfold serve: ${m}\n`));
    await new Promise<void>((resolveStop) => {
      const stop = () => resolveStop();
      process.once('SIGINT', stop);
      process.once('SIGTERM', stop);
    });
    await running.close();
    await backend.close();
    return 0;
  },
};
