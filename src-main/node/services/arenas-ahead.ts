/**
 * The whole planes' arenas of a compress made ahead, from the probe's size (../../engine/codec/wasm/arena.ts
 * prepareArenas), and the first touch of the pages their loads will write, on the encoder's side thread: it is
 * idle from the end of its start-up (while sharp decodes) until the encoder's first job, and that job (the
 * crop's, needed only after the whole planes are analysed) may wait a little more. The side takes each
 * plane's coefficients from the last page down while this thread's load (../../engine/codec/arena-split.ts
 * loadSplit) writes them from the first: every page it faults in first (about 12 µs each on the 2-core
 * machine of issue #12, several times the load's own work on it) comes off this thread's critical path. The
 * touch ends when the last of these arenas is loaded. The file is the same bit for bit: the memory is as fresh
 * as the one the encoder would make, and the touch (an atomic add of 0 per page) changes no value.
 *
 * A grey scan's memory may have been made earlier still, by the launcher from the PNG's header (its
 * coefficients' pages first-touched by a pool thread while the CLI's code loaded: ../cli/args/early-arena.ts):
 * it is taken when the probe agrees, else its touch is stopped and it is dropped.
 */
import type { Budget } from '../../contract';
import { dropPreparedArenas, prepareArenas } from '../../engine/codec/wasm/arena';
import { residualFirstApplies } from '../../engine/lowrank/residual-scope';
import type { ProbeResult } from '../image/decode';
import { isColourScan } from '../image/refusals';
import type { SideThread } from '../parallel/side-thread';

/** A whole grey plane's arena memory made before the probe, its first touch on a pool thread under way. */
export interface ArenaAhead {
  width: number;
  height: number;
  memory: WebAssembly.Memory;
  /** Stop the touch; resolves once nothing writes the memory any more (await it before the encode). */
  touch: { stop(): Promise<void> };
}

/**
 * For a scan whose encode analyses its whole planes in arenas first (the residual-only shortcut, with a side
 * thread): make those arenas' memories (or take `made`'s) and start their touch on `side`. Returns what
 * forgets the memories no arena took and ends the touch (call it once the encode is over or failed; a no-op
 * when all were taken).
 */
export function arenasAhead(
  probe: ProbeResult,
  options: { layers: 'auto' | 'base'; budget: Budget; lossless?: boolean },
  side: SideThread | undefined,
  made?: ArenaAhead,
): () => void {
  const { width, height } = probe;
  const colour = isColourScan(probe.meta);
  const applies = side && !options.lossless && residualFirstApplies(width, height, options);
  const fits = applies && made?.width === width && made.height === height && !colour;
  // Not taken: its pool thread stops after the request in flight, and nothing here keeps the memory.
  if (!fits) made?.touch.stop();
  if (!applies) return () => {};
  const touch: Parameters<typeof prepareArenas>[3] = (regions) => {
    const stop = new Int32Array(new SharedArrayBuffer(4));
    // Each plane's from its last page down (a[2] = 1), in the order the encoder loads them.
    const joins = regions.map(({ memory, from, to }) =>
      side.run('arena-pass', {
        memory,
        id: 0,
        op: 'touch',
        inverse: false,
        a: [from, to, 1],
        scratch: [],
        stop,
      }),
    );
    let ended = false;
    const end = () => {
      if (ended) return;
      ended = true;
      Atomics.store(stop, 0, 1);
      for (const join of joins) join();
    };
    // Under a quality floor the encoder needs its first job (the crop's) right after the load: it goes first.
    if (options.budget.kind === 'psnr') side.beforeNextJob(end);
    return end;
  };
  prepareArenas(width, height, colour ? 3 : 1, touch, fits && made ? [made.memory] : []);
  return dropPreparedArenas;
}
