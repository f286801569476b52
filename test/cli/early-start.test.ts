// The side thread that the CLI entry starts for `compress` before the command's modules load
// (src-main/node/cli/args/early-start.ts): which arguments start it, that the command uses it instead of starting
// a second one, and that the entry closes it on every path (success, bad input, usage errors).
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, afterEach, describe, expect, it, vi } from 'vitest';
import { compressWantsSide } from '../../src-main/node/cli/args/early-arena';
import { main } from '../../src-main/node/cli/main';
import { SideThread } from '../../src-main/node/parallel/side-thread';
import { image } from '../helpers/fixtures';

const dir = mkdtempSync(join(tmpdir(), 'rankfold-cli-early-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
afterEach(() => {
  vi.restoreAllMocks();
});

/** Every side thread started from now on, and the ones closed. */
function watchSideThreads() {
  const started: SideThread[] = [];
  const closed = new Set<SideThread>();
  const start = SideThread.start;
  const close = SideThread.prototype.close;
  vi.spyOn(SideThread, 'start').mockImplementation(() => {
    const s = start();
    if (s) started.push(s);
    return s;
  });
  vi.spyOn(SideThread.prototype, 'close').mockImplementation(function (this: SideThread) {
    closed.add(this);
    return close.call(this);
  });
  return { started, closed };
}

async function run(...argv: string[]) {
  let stderr = '';
  const code = await main(argv, { stdout: () => {}, stderr: (t) => (stderr += t), isTTY: false });
  return { code, stderr };
}

describe('the side thread started before compress loads', () => {
  it('is the only one a successful compress starts, and is closed afterwards', async () => {
    const w = watchSideThreads();
    const out = join(dir, 'ok.rkf');
    const r = await run('compress', image('page.png'), '-o', out, '--bpp', '0.5');
    expect(r.code).toBe(0);
    expect(statSync(out).size).toBeGreaterThan(0);
    // The built worker (dist/workers/side.js) exists once `npm run build` has run, as `npm test` does first.
    expect(w.started).toHaveLength(1);
    expect(w.closed.has(w.started[0])).toBe(true);
  });

  it('is closed after a missing input file, with the usual one-sentence error and exit code 1', async () => {
    const w = watchSideThreads();
    const out = join(dir, 'missing.rkf');
    const r = await run('compress', join(dir, 'nope.png'), '-o', out, '--bpp', '0.25');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('nope.png: no such file');
    expect(() => statSync(out)).toThrow();
    expect(w.started).toHaveLength(1);
    expect(w.closed.has(w.started[0])).toBe(true);
  });

  it('is closed after a usage error found by the command', async () => {
    const w = watchSideThreads();
    const r = await run(
      'compress',
      image('page.png'),
      '-o',
      join(dir, 'u.rkf'),
      '--bpp',
      '0.5',
      '--tile',
      'x',
    );
    expect(r.code).toBe(1);
    expect(w.started).toHaveLength(1);
    expect(w.closed.has(w.started[0])).toBe(true);
  });

  it('is not started for help, --stack, --workers 0 or 1, or other commands', async () => {
    const w = watchSideThreads();
    expect((await run('compress', '--help')).code).toBe(0);
    expect((await run('compress', '--stack', dir, '-o', join(dir, 's.rkf'), '--rank', '2')).code).toBe(1);
    const one = await run(
      'compress',
      image('page.png'),
      '-o',
      join(dir, 'w1.rkf'),
      '--bpp',
      '0.5',
      '--workers',
      '1',
    );
    expect(one.code).toBe(0);
    expect((await run('inspect', join(dir, 'nope.png'))).code).toBe(1);
    expect(w.started).toHaveLength(0);
  });
});

describe('compressWantsSide', () => {
  it('reads --workers as parseArgs does (the last one counts; =N form), and stops at --', () => {
    const base = ['in.png', '-o', 'out.rkf', '--bpp', '0.25'];
    expect(compressWantsSide(base)).toBe(true);
    expect(compressWantsSide([...base, '--workers', '2'])).toBe(true);
    expect(compressWantsSide([...base, '--workers', '1'])).toBe(false);
    expect(compressWantsSide([...base, '--workers=0'])).toBe(false);
    expect(compressWantsSide([...base, '--workers', '1', '--workers', '4'])).toBe(true);
    expect(compressWantsSide([...base, '--workers=3', '--workers', '1'])).toBe(false);
    expect(compressWantsSide([...base, '-h'])).toBe(false);
    expect(compressWantsSide([...base, '--stack'])).toBe(false);
    expect(compressWantsSide(['--', '--workers', '1'])).toBe(true);
    // An unreadable count is the command's usage error to report; the thread is started and closed meanwhile.
    expect(compressWantsSide([...base, '--workers', 'two'])).toBe(true);
  });
});
