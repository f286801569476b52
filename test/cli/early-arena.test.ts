// The whole plane's arena memory the launcher makes before the CLI's code loads
// (src-main/node/cli/args/early-arena.ts): made only for `compress` of a complete grey PNG whose encode tries the
// residual-only shortcut, never for a bad header, a truncated file, a directory, a missing file or other
// options; adopted by the encoder's first whole-plane arena when the probe agrees (src-main/node/services/
// arenas-ahead.ts), dropped otherwise; and a run with it writes the same file as a run without it.
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { dropPreparedArenas, PlaneArena } from '../../src-main/engine/codec/wasm/arena';
import { arenaBytes, PAGE } from '../../src-main/engine/codec/wasm/arena-size';
import {
  arenaAhead,
  greyPngSize,
  leaveArenaAhead,
  takeArenaAhead,
} from '../../src-main/node/cli/args/early-arena';
import { main } from '../../src-main/node/cli/main';
import type { ProbeResult } from '../../src-main/node/image/decode';
import type { SideThread } from '../../src-main/node/parallel/side-thread';
import { type ArenaAhead, arenasAhead } from '../../src-main/node/services/arenas-ahead';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-early-arena-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// 1300×1300 = 1.69 M pixels: above the residual-only shortcut's 1.5 · 2^20 (engine/lowrank/residual-scope.ts).
const [W, H] = [1300, 1300];
const big = join(dir, 'big-grey.png');
const small = join(dir, 'small-grey.png');
const colour = join(dir, 'colour.png');
const truncated = join(dir, 'truncated.png');
const zeroWide = join(dir, 'zero-wide.png');
const notPng = join(dir, 'not-a-png.png');

/** A w×h grey (or RGB) PNG with a gradient and some texture, so it codes to more than a few bytes. */
async function png(file: string, w: number, h: number, channels: 1 | 3) {
  const px = Buffer.alloc(w * h * channels);
  for (let i = 0; i < px.length; i++) px[i] = (i * 7 + ((i * 2654435761) >>> 27)) & 255;
  const img = sharp(px, { raw: { width: w, height: h, channels } });
  await (channels === 1 ? img.toColourspace('b-w') : img).png().toFile(file);
}

beforeAll(async () => {
  await png(big, W, H, 1);
  await png(small, 300, 200, 1);
  await png(colour, W, H, 3);
  const bytes = readFileSync(big);
  writeFileSync(truncated, bytes.subarray(0, bytes.length - 1));
  const zero = Buffer.from(bytes);
  zero.writeUInt32BE(0, 16);
  writeFileSync(zeroWide, zero);
  writeFileSync(join(dir, 'exists.rkf'), 'an earlier output');
  writeFileSync(notPng, 'not an image at all, but long enough to hold a PNG header and its last chunk\n');
  mkdirSync(join(dir, 'folder.png'));
});

const args = (input: string, ...more: string[]) => [input, '-o', join(dir, 'out.rkf'), ...more];

describe('the PNG header read before the CLI loads', () => {
  it('gives the size of a complete grey PNG only', () => {
    expect(greyPngSize(big)).toEqual({ width: W, height: H });
    expect(greyPngSize(small)).toEqual({ width: 300, height: 200 });
    for (const bad of [
      colour,
      truncated,
      zeroWide,
      notPng,
      join(dir, 'folder.png'),
      join(dir, 'missing.png'),
    ])
      expect(greyPngSize(bad), bad).toBeUndefined();
  });
});

describe('arenaAhead', () => {
  it('makes a shared memory of the arena size for a large grey PNG under a byte budget or PSNR floor', async () => {
    for (const budget of [
      ['--bpp', '0.25'],
      ['--budget', '60kB'],
      ['--min-psnr=40'],
      ['--workers', '2', '--bpp', '1'],
      ['--bpp', '0.25', '--tile', '64', '--json', '--page', '0'],
    ]) {
      const made = arenaAhead(args(big, ...budget));
      expect(made, budget.join(' ')).toBeDefined();
      if (!made) continue;
      expect([made.width, made.height]).toEqual([W, H]);
      expect(made.memory.buffer).toBeInstanceOf(SharedArrayBuffer);
      expect(made.memory.buffer.byteLength).toBe(Math.ceil((arenaBytes(W, H) ?? 0) / PAGE) * PAGE);
      await made.touch.stop();
    }
  });

  it('makes nothing for bad input, small or colour scans, or options that take another path', () => {
    const none = [
      args(truncated, '--bpp', '0.25'),
      args(zeroWide, '--bpp', '0.25'),
      args(notPng, '--bpp', '0.25'),
      args(join(dir, 'folder.png'), '--bpp', '0.25'),
      args(join(dir, 'missing.png'), '--bpp', '0.25'),
      args(small, '--bpp', '0.25'),
      args(colour, '--bpp', '0.25'),
      args(big, '--rank', '5'),
      args(big, '--min-ssim', '0.9'),
      args(big, '--lossless'),
      args(big, '--bpp', '0.25', '--lossless'),
      args(big, '--bpp', '0.25', '--budget', '60kB'),
      args(big, '--bpp', '0.25', '--layers', 'base'),
      args(big, '--bpp', '0.25', '--workers', '1'),
      args(big, '--bpp', '0.25', '--stack'),
      args(big, '--bpp', '0.25', '--help'),
      args(big, '--bpp', '0.25', '--pixel-limit', '1000000'),
      args(big, '--bpp', 'a quarter'),
      args(big, '--budget', 'small'),
      args(big, '--bpp', '0.25', '--tile', '7'),
      args(big, '--bpp', '0.25', '--workers', 'many'),
      args(big, '--bpp', '0.25', '--unheard-of'),
      [big, '--bpp', '0.25'],
      [big, '-o', join(dir, 'out.png'), '--bpp', '0.25'],
      [big, '-o', big.replace(/\.png$/, '.rkf').replace('big-grey', 'exists'), '--bpp', '0.25'],
    ];
    for (const a of none) expect(arenaAhead(a), a.join(' ')).toBeUndefined();
  });

  it('is left only for compress, and taken once', async () => {
    leaveArenaAhead(['expand', big, '-o', join(dir, 'x.png')]);
    expect(takeArenaAhead()).toBeUndefined();
    leaveArenaAhead(['compress', ...args(big, '--bpp', '0.25')]);
    const made = takeArenaAhead();
    expect(made?.width).toBe(W);
    expect(takeArenaAhead()).toBeUndefined();
    await made?.touch.stop();
  });
});

describe('the encoder adopts the memory made ahead', () => {
  /** A side thread stand-in: its touches run nowhere and end at once. */
  const side = { run: () => () => 0, beforeNextJob: () => {} } as unknown as SideThread;
  const probe = (width: number, height: number, space = 'b-w', channels = 1) =>
    ({ width, height, meta: { space, channels } }) as unknown as ProbeResult;
  const options = { layers: 'auto' as const, budget: { kind: 'bpp' as const, bpp: 0.25 } };

  function madeAhead(): ArenaAhead & { stops: number } {
    const made = arenaAhead(args(big, '--bpp', '0.25'));
    if (!made) throw new Error('nothing made');
    const stop = made.touch.stop;
    const out = { ...made, stops: 0 };
    out.touch = {
      stop: () => {
        out.stops++;
        return stop();
      },
    };
    return out;
  }

  it('for the first whole plane of the size it was made for', async () => {
    const made = madeAhead();
    const drop = arenasAhead(probe(W, H), options, side, made);
    await made.touch.stop();
    const arena = PlaneArena.create(W, H);
    expect(arena?.memory).toBe(made.memory);
    const next = PlaneArena.create(W, H);
    expect(next?.memory).not.toBe(made.memory);
    drop();
    arena?.release();
    next?.release();
  });

  it('not when the probe disagrees (size, colour) or the encode takes another path; its touch is stopped', async () => {
    const cases: Array<[ProbeResult, typeof options & { lossless?: boolean }, SideThread | undefined]> = [
      [probe(W + 1, H), options, side],
      [probe(W, H, 'srgb', 3), options, side],
      [probe(W, H), { ...options, lossless: true }, side],
      [probe(W, H), { ...options, layers: 'base' as never }, side],
      [probe(W, H), options, undefined],
    ];
    for (const [p, o, s] of cases) {
      const made = madeAhead();
      const drop = arenasAhead(p, o, s, made);
      expect(made.stops).toBeGreaterThan(0);
      await made.touch.stop();
      const arena = PlaneArena.create(p.width, p.height);
      expect(arena?.memory).not.toBe(made.memory);
      arena?.release();
      drop();
      dropPreparedArenas();
    }
  });
});

describe('a compress run with the memory made ahead', () => {
  it('writes the same file as one without, and leaves nothing behind', async () => {
    const run = async (out: string, ahead: boolean) => {
      const argv = ['compress', big, '-o', out, '--bpp', '0.5', '--workers', '2'];
      if (ahead) leaveArenaAhead(argv);
      const code = await main(argv, { stdout: () => {}, stderr: () => {}, isTTY: false });
      expect(code).toBe(0);
      expect(takeArenaAhead()).toBeUndefined();
      return readFileSync(out);
    };
    const without = await run(join(dir, 'without.rkf'), false);
    const withAhead = await run(join(dir, 'with.rkf'), true);
    expect(withAhead.equals(without)).toBe(true);
  }, 60_000);
});
