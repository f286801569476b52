// A real side thread (the built worker) for the tests of work that plane arenas share with it: while the
// describe block runs, arenas and splits are allowed at every size; afterwards the defaults are restored and
// the thread is closed (arenasAtEverySize alone without the thread). Shared by test/codec/arena-split and
// test/codec/arena-quant.
import { afterAll, beforeAll } from 'vitest';
import {
  type ArenaPassArgs,
  type ArenaRunner,
  SPLIT_MIN_SAMPLES,
  setSplitMinSamples,
} from '../../src-main/engine/codec/arena-split';
import { ARENA_MIN_PIXELS, setArenaMinPixels } from '../../src-main/engine/codec/wasm/arena';
import { SideThread } from '../../src-main/node/parallel/side-thread';

/** Call inside a describe block: arenas and splits at every size while it runs, the defaults restored after. */
export function arenasAtEverySize(): void {
  beforeAll(() => {
    setArenaMinPixels(1);
    setSplitMinSamples(1);
  });
  afterAll(() => {
    setArenaMinPixels(ARENA_MIN_PIXELS);
    setSplitMinSamples(SPLIT_MIN_SAMPLES);
  });
}

/** Call inside a describe block; the returned function gives the thread, or throws when the worker is not built. */
export function realSideThread(): () => SideThread {
  let side: SideThread | undefined;
  arenasAtEverySize();
  beforeAll(async () => {
    side = SideThread.start();
    await side?.ready();
  });
  afterAll(async () => {
    await side?.close();
  });
  return () => {
    if (!side) throw new Error('the side worker is not built (npm run build)');
    return side;
  };
}

/**
 * A runner that offers each pass to `thread` and then waits 5 ms (for the passes `pauses` selects, all by
 * default), so the worker starts some pieces before the caller takes the rest back.
 */
export function offeredWithPause(
  thread: SideThread,
  pauses: (a: ArenaPassArgs) => boolean = () => true,
): ArenaRunner {
  const pause = new Int32Array(new SharedArrayBuffer(4));
  return (a) => {
    const join = thread.run('arena-pass', a);
    if (pauses(a)) Atomics.wait(pause, 0, 0, 5);
    return join;
  };
}
