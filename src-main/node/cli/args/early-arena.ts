/**
 * The whole plane's arena memory of a `rankfold compress` made before the program's code loads: the launcher
 * (bin/rankfold.mjs) runs this module (built alone as dist/early.js) before it imports dist/cli.js, and the
 * coefficients' pages are first-touched on a libuv pool thread while this thread compiles the CLI and starts
 * the command (the second core of the 2-core machine of issue #12 is otherwise idle until the side thread
 * starts). The encoder's first big write, the load of the samples into those coefficients, then finds its
 * pages present: at about 11 µs per fresh 4 KiB page, that load was ~330 ms of page faults on the main thread
 * for an 8-megapixel scan.
 *
 * Only for a grey PNG whose encode will analyse its whole plane in an arena (the residual-only shortcut,
 * ../../../engine/lowrank/residual-scope.ts, with a side thread): told from the arguments as far as they show
 * before the command parses them, and from the PNG's header (29 bytes) and last chunk (IEND; a truncated file
 * has none). Anything else (another command or format, a colour scan, a missing, unreadable or truncated file,
 * a directory, sizes out of range, an output the command would refuse) makes nothing.
 * ../../services/arenas-ahead.ts hands the memory to the encoder when the probe agrees, or drops it; the
 * output is the same bit for bit either way (the load overwrites every coefficient, and the random bytes of
 * the touch are never read).
 */
import { closeSync, existsSync, fstatSync, openSync, readSync } from 'node:fs';
import { parseArgs } from 'node:util';
import type { Budget } from '../../../contract';
import { checkTile, parseBudgetText } from '../../../contract/budget';
import { OPTIONS, optionValue, parseOptionText } from '../../../contract/options';
import { arenaBytes, BASE, PAGE } from '../../../engine/codec/wasm/arena-size';
import { isSharedMemory, newArenaMemory } from '../../../engine/codec/wasm/shared-memory';
import { residualFirstApplies } from '../../../engine/lowrank/residual-scope';
import { prefault } from '../../image/prefault';
import type { ArenaAhead } from '../../services/arenas-ahead';
import type { OptionSpec } from './command';
import { COMPRESS_OPTIONS } from './compress-options';

/** Where the launcher leaves it for the CLI entry (../cli/main.ts), which takes it once. */
const KEY = Symbol.for('rankfold.arenaAhead');

/** The PNG signature, and the IEND chunk every complete PNG ends with (ISO/IEC 15948:2003, 5.2 and 11.2.5). */
const SIGNATURE = [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a];
const IEND = [0, 0, 0, 0, 0x49, 0x45, 0x4e, 0x44, 0xae, 0x42, 0x60, 0x82];

/**
 * True when `rankfold compress ARGS` will encode with two or more threads, as far as the arguments show before
 * the command parses them: not for help or `--stack`, nor with `--workers` 0 or 1 (the last one given counts).
 */
export function compressWantsSide(argv: readonly string[]): boolean {
  let workers: string | undefined;
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--') break;
    if (a === '--help' || a === '-h' || a === '--stack') return false;
    if (a === '--workers') workers = argv[i + 1];
    else if (a.startsWith('--workers=')) workers = a.slice('--workers='.length);
  }
  const n = workers === undefined ? Number.NaN : Number(workers);
  return !(Number.isInteger(n) && n < 2);
}

/**
 * Bytes of the first touch request: about what one pool thread faults in (~2.8 ms per MB) while the CLI's
 * code loads (~85 ms on the 2-core machine of issue #12, more under load).
 */
const FIRST_TOUCH_BYTES = 32 << 20;

/**
 * What `compress ARGS` asks for, read with the command's own option declarations (./compress-options.ts) and
 * node:util parseArgs as the command reads them: the input and each option's value as text (a switch as '');
 * undefined when the command would refuse the arguments, there is not exactly one input, or an option is given
 * twice.
 */
function compressArgs(argv: readonly string[]) {
  let parsed: ReturnType<typeof parseArgs<{ options: OptionSpec; allowPositionals: true; tokens: true }>>;
  try {
    parsed = parseArgs({
      args: [...argv],
      options: { ...COMPRESS_OPTIONS, help: { type: 'boolean', short: 'h' } },
      allowPositionals: true,
      strict: true,
      tokens: true,
    });
  } catch {
    return undefined;
  }
  const given = new Map<string, string>();
  for (const t of parsed.tokens) {
    if (t.kind !== 'option') continue;
    if (given.has(t.name)) return undefined;
    given.set(t.name, t.value ?? '');
  }
  const [input, ...more] = parsed.positionals;
  return input === undefined || more.length > 0 ? undefined : { input, given };
}

/**
 * The budget of `compress` options when it is one whose encode tries the residual-only shortcut, with every
 * value the command checks before it decodes checked here by the contract's own parsers (a value it refuses
 * makes nothing ahead); undefined otherwise.
 */
function budgetOf(given: Map<string, string>): Budget | undefined {
  if (given.has('lossless') || given.has('rank') || given.has('min-ssim')) return undefined;
  const kinds = (['budget', 'bpp', 'min-psnr'] as const).filter((k) => given.has(k));
  if (kinds.length !== 1) return undefined;
  const text = (k: string) => given.get(k) as string;
  try {
    const tile = given.get('tile')?.trim();
    if (tile !== undefined && tile !== 'auto') checkTile(optionValue(OPTIONS.tile, tile));
    for (const [k, d] of [
      ['workers', OPTIONS.workers],
      ['page', OPTIONS.page],
      ['pixel-limit', OPTIONS.pixelLimit],
    ] as const)
      if (given.has(k)) parseOptionText(d, text(k));
    if (kinds[0] === 'budget') return parseBudgetText(text('budget'));
    if (kinds[0] === 'bpp') return { kind: 'bpp', bpp: parseOptionText(OPTIONS.bpp, text('bpp')) };
    return { kind: 'psnr', db: parseOptionText(OPTIONS.minPsnr, text('min-psnr')) };
  } catch {
    return undefined;
  }
}

/** Width and height of a complete grey PNG (colour types 0 and 4), read from its first 29 and last 12 bytes. */
export function greyPngSize(file: string): { width: number; height: number } | undefined {
  let fd: number | undefined;
  try {
    fd = openSync(file, 'r');
    const size = fstatSync(fd).size;
    const head = Buffer.alloc(29);
    const tail = Buffer.alloc(12);
    if (size < 57 || readSync(fd, head, 0, 29, 0) !== 29 || readSync(fd, tail, 0, 12, size - 12) !== 12)
      return undefined;
    if (SIGNATURE.some((b, i) => head[i] !== b) || IEND.some((b, i) => tail[i] !== b)) return undefined;
    if (head.readUInt32BE(8) !== 13 || head.toString('latin1', 12, 16) !== 'IHDR') return undefined;
    const [width, height, depth, colour] = [head.readUInt32BE(16), head.readUInt32BE(20), head[24], head[25]];
    if ((colour !== 0 && colour !== 4) || (depth !== 8 && depth !== 16)) return undefined;
    return width > 0 && height > 0 ? { width, height } : undefined;
  } catch {
    return undefined;
  } finally {
    if (fd !== undefined) closeSync(fd);
  }
}

/**
 * For `rankfold compress ARGV` of a grey PNG whose whole plane gets an arena: that arena's shared memory, with
 * the first touch of its coefficients started on a pool thread. Undefined (nothing made) otherwise.
 */
export function arenaAhead(argv: readonly string[]): ArenaAhead | undefined {
  const args = compressArgs(argv);
  if (!args || args.given.has('stack') || args.given.has('help')) return undefined;
  if (!compressWantsSide(argv)) return undefined;
  const budget = budgetOf(args.given);
  const layers = args.given.get('layers') ?? 'auto';
  if (budget === undefined || layers !== 'auto') return undefined;
  // The command refuses these before it decodes (../../services/compress.ts compressFile).
  const output = args.given.get('output');
  if (!output || !/\.rkf$/i.test(output) || (!args.given.has('force') && existsSync(output)))
    return undefined;
  const size = greyPngSize(args.input);
  if (!size) return undefined;
  const { width, height } = size;
  const limit = args.given.get('pixel-limit');
  if (limit !== undefined && !(Number(limit) >= width * height)) return undefined;
  if (!residualFirstApplies(width, height, { layers, budget })) return undefined;
  const bytes = arenaBytes(width, height);
  const memory = bytes === undefined ? null : newArenaMemory(Math.ceil(bytes / PAGE));
  if (!memory || !isSharedMemory(memory)) return undefined;
  // The coefficients, which the load writes in full and first (the rest is touched where it is used). The
  // first request covers what the pool thread touches while the CLI's code loads (this thread's event loop
  // turns no more until then); smaller ones follow, so a run that ends early is not held up by them.
  const touch = prefault([new Uint8Array(memory.buffer, BASE, 8 * width * height)], FIRST_TOUCH_BYTES);
  return { width, height, memory, touch };
}

/** The launcher's side: make it (if anything) and leave it for the CLI entry. Never throws. */
export function leaveArenaAhead(argv: readonly string[]): void {
  try {
    const made = argv[0] === 'compress' ? arenaAhead(argv.slice(1)) : undefined;
    if (made) (globalThis as Record<symbol, unknown>)[KEY] = made;
  } catch {
    // Nothing ahead: the run makes its arenas as it always did.
  }
}

/** The CLI entry's side: what the launcher left, taken once (later calls give undefined). */
export function takeArenaAhead(): ArenaAhead | undefined {
  const g = globalThis as Record<symbol, ArenaAhead | undefined>;
  const made = g[KEY];
  delete g[KEY];
  return made;
}
