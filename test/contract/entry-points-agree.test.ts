/**
 * Property: the CLI, the HTTP server and the IPC handler wrapper accept the same option values and refuse
 * the rest with the same message, because all three read the declarations of src-main/contract/options.ts.
 *
 * Random budgets, tiles and clean settings (a seeded generator, so a failure reproduces) go through:
 * - the CLI: `rankfold compress` / `rankfold clean` on a file that does not exist, so an accepted value
 *   reaches the service and fails there on the missing file, and a refused one fails in parsing;
 * - HTTP: POST /api/call/evaluate or /clean on a real browser-mode server, for a scan that is not open
 *   (accepted: 422 from the back end; refused: 400 with the validator's message);
 * - IPC: the handler registerIpc installs, called as Electron would call it from our page.
 */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { type Budget, type RankfoldError, UsageError } from '../../src-main/contract';
import { registerIpc } from '../../src-main/electron/ipc';
import { Rng } from '../../src-main/engine/linalg/random';
import type { CliIO } from '../../src-main/node/cli/args/command';
import { command as cleanCommand } from '../../src-main/node/cli/commands/clean';
import { command as compressCommand } from '../../src-main/node/cli/commands/compress';
import { call, startTestServer, type TestServer } from '../server/harness';

const rng = new Rng(20261203);
const random = (): number => rng.uniform();
const pick = <T>(xs: readonly T[]): T => xs[Math.floor(random() * xs.length)];
/** A value near the edges of a range, or a random decimal in a wider one (written without exponents). */
const around = (edges: number[], lo: number, hi: number, digits: number) =>
  random() < 0.5 ? pick(edges) : Number((lo + random() * (hi - lo)).toFixed(digits));

type Outcome = { accepted: true } | { accepted: false; message: string };
type Kind = Budget['kind'];

interface CompressCase {
  kind: Kind;
  value: number;
  tile: number | 'auto';
}

function compressCase(): CompressCase {
  const kind = pick<Kind>(['rank', 'bytes', 'percent', 'bpp', 'psnr', 'ssim']);
  const value = {
    rank: () => around([-3, 0, 1, 2, 2.5, 4096, 5000, 65535, 65536], -5, 70000, random() < 0.8 ? 0 : 1),
    bytes: () => around([0, 10, 63, 64, 65, 250000], 0, 1e7, 0),
    percent: () => around([0, 0.0005, 0.001, 0.5, 100, 100.5, 150], 0, 120, 3),
    bpp: () => around([-1, 0, 0.0005, 0.001, 64, 64.5], -2, 80, 3),
    psnr: () => around([-5, 0, 0.5, 1, 200, 201], -10, 250, 2),
    ssim: () => around([-0.1, 0, 0.005, 0.01, 0.5, 1, 1.01], -0.2, 1.2, 3),
  }[kind]();
  const tile = pick<number | 'auto'>([
    'auto',
    0,
    8,
    15,
    16,
    64,
    512,
    513,
    2.5,
    -16,
    Math.floor(random() * 600),
  ]);
  return { kind, value, tile };
}

const FIELD = {
  rank: 'rank',
  bytes: 'bytes',
  percent: 'percent',
  bpp: 'bpp',
  psnr: 'db',
  ssim: 'value',
} as const;
const FLAG = {
  rank: 'rank',
  bytes: 'budget',
  percent: 'budget',
  bpp: 'bpp',
  psnr: 'min-psnr',
  ssim: 'min-ssim',
};

interface CleanCase {
  noise: 'auto' | 'off' | number;
  banding: string;
}

function cleanCase(): CleanCase {
  const noise =
    random() < 0.3 ? pick(['auto', 'off'] as const) : around([-1, 0, 0.5, 8, 65535, 65536], -5, 70000, 2);
  return { noise, banding: pick(['auto', 'rows', 'columns', 'both', 'off', 'sideways', 'Rows']) };
}

const dir = mkdtempSync(join(tmpdir(), 'rankfold-agree-'));
const missing = join(dir, 'no-such-scan.png');
const io: CliIO = { stdout: () => undefined, stderr: () => undefined, isTTY: false };

/** A command run on a missing input: accepted when it gets as far as the file. */
async function viaCli(run: () => Promise<number>): Promise<Outcome> {
  try {
    await run();
    throw new Error('the command ran on a missing file');
  } catch (err) {
    const e = err as RankfoldError;
    if (e instanceof UsageError) return { accepted: false, message: e.message };
    expect(e.message).toContain('no such file');
    return { accepted: true };
  }
}

async function viaHttp(server: TestServer, method: string, payload: unknown): Promise<Outcome> {
  const r = await call(server.srv, method, payload);
  const body = JSON.parse(r.body);
  if (r.status === 422) {
    expect(body.error.message).toMatch(/is not open/);
    return { accepted: true };
  }
  expect(r.status).toBe(400);
  return { accepted: false, message: body.error.message };
}

/** registerIpc's handlers, called as Electron calls them: from our page's main frame. */
const ipcHandlers = new Map<string, (event: unknown, payload: unknown) => Promise<unknown>>();
registerIpc(
  { handle: (channel: string, h: never) => ipcHandlers.set(channel, h) } as never,
  {
    call: async () => {
      throw new UsageError('reached the back end');
    },
  },
  () => undefined,
);
const pageFrame = { senderFrame: { url: 'rankfold://app/index.html', parent: null } };

async function viaIpc(method: string, payload: unknown): Promise<Outcome> {
  const handler = ipcHandlers.get(`rankfold:${method}`);
  if (!handler) throw new Error(`no IPC handler for ${method}`);
  const reply = (await handler(pageFrame, payload)) as { ok: boolean; error: { message: string } };
  expect(reply.ok).toBe(false);
  if (reply.error.message === 'reached the back end') return { accepted: true };
  return { accepted: false, message: reply.error.message };
}

let server: TestServer;
beforeAll(async () => {
  server = await startTestServer();
});
afterAll(async () => {
  await server?.close();
});

describe('the CLI, HTTP and IPC accept and refuse the same options with the same message', () => {
  it('budgets and tiles (compress / evaluate): 240 seeded cases', async () => {
    let refused = 0;
    for (let i = 0; i < 240; i++) {
      const c = compressCase();
      const text = c.kind === 'percent' ? `${c.value}%` : String(c.value);
      const argv = [missing, '-o', join(dir, 'out.rkf'), `--${FLAG[c.kind]}=${text}`, `--tile=${c.tile}`];
      const payload = {
        scanId: 'nosuch',
        budget: { kind: c.kind, [FIELD[c.kind]]: c.value },
        tile: c.tile,
        job: 'j1',
      };
      const label = `${argv.slice(3).join(' ')} / ${JSON.stringify(payload)}`;
      const cli = await viaCli(() => compressCommand.run(argv, io));
      expect(await viaHttp(server, 'evaluate', payload), label).toEqual(cli);
      expect(await viaIpc('evaluate', payload), label).toEqual(cli);
      if (!cli.accepted) refused++;
    }
    // Both sides of the boundaries were exercised.
    expect(refused).toBeGreaterThan(40);
    expect(refused).toBeLessThan(200);
  }, 120_000);

  it('clean settings (clean): 80 seeded cases', async () => {
    let refused = 0;
    for (let i = 0; i < 80; i++) {
      const c = cleanCase();
      const argv = [missing, '-o', join(dir, 'out.png'), `--noise=${c.noise}`, `--banding=${c.banding}`];
      const payload = { scanId: 'nosuch', settings: c, job: 'j1' };
      const label = `${argv.slice(3).join(' ')} / ${JSON.stringify(payload)}`;
      const cli = await viaCli(() => cleanCommand.run(argv, io));
      expect(await viaHttp(server, 'clean', payload), label).toEqual(cli);
      expect(await viaIpc('clean', payload), label).toEqual(cli);
      if (!cli.accepted) refused++;
    }
    expect(refused).toBeGreaterThan(10);
    expect(refused).toBeLessThan(70);
  }, 60_000);
});
