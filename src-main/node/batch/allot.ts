/**
 * Who decides each file's byte cap while a `--total` batch encodes.
 *
 * - {@link LiveAllotter} (one machine): when a file starts, the bytes not yet spent are shared again among
 *   the files not yet started, so bytes a file did not use (it came out under its cap) raise the others.
 *   Every file is encoded under a hard cap equal to its allotment (the compress service refuses to write more),
 *   so a file can never come out larger, and the sum stays within the total by construction, never by cutting
 *   a file short. Re-planning runs again after every ceil(n/100) files that came out under their cap (n: files
 *   left), so a folder of 40,000 scans re-plans a few hundred times, not 40,000.
 * - {@link FixedAllotter} (`--plan plan.json`, any shard): the shared plan's bytes, file by file, so every
 *   shard and one machine give the same file for the same input.
 */
import { type Allocation, allocate, type Favour } from './allocate';
import type { RateCurve } from './rate-curve';

/** One file's allotment: its byte cap, the predicted PSNR, and the plan's floor when it started. */
export interface Allotment {
  bytes: number;
  psnr: number;
  floor: number;
}

export interface Allotter {
  /** The cap for a file about to start. @throws Error naming the file when the plan has none for it. */
  take(path: string): Allotment;
  /** A started file ended with `actual` bytes on disk (0 when it failed). */
  settle(path: string, allotted: number, actual: number): void;
}

export class LiveAllotter implements Allotter {
  private readonly left: Set<string>;
  private plan = new Map<string, Allotment>();
  private dirty = 0;

  constructor(
    private readonly curves: Map<string, RateCurve>,
    /** Bytes the files not yet started may take. */
    private free: number,
    private readonly favour: Favour,
    private readonly minPsnr: number | undefined,
    first: Allocation,
  ) {
    this.left = new Set(curves.keys());
    this.store([...curves.keys()], first);
  }

  take(path: string): Allotment {
    if (!this.plan.has(path) || this.dirty >= Math.ceil(this.left.size / 100)) this.replan();
    const a = this.plan.get(path);
    if (!a) throw new Error(`${path} has no rate–quality curve from the survey`);
    this.left.delete(path);
    this.plan.delete(path);
    this.free -= a.bytes;
    return a;
  }

  settle(_path: string, allotted: number, actual: number): void {
    this.free += allotted - actual;
    if (actual < allotted) this.dirty++;
  }

  private replan(): void {
    const paths = [...this.left];
    const plan = allocate(
      paths.map((p) => this.curves.get(p)!),
      this.free,
      this.favour,
      this.minPsnr,
    );
    // Never infeasible (bytes only come back), but should rounding say so, the last plan stands.
    if (plan) this.store(paths, plan);
    this.dirty = 0;
  }

  private store(paths: string[], plan: Allocation): void {
    this.plan = new Map(
      paths.map((p, i) => [p, { bytes: plan.bytes[i], psnr: plan.psnr[i], floor: plan.floor }]),
    );
  }
}

export class FixedAllotter implements Allotter {
  constructor(
    private readonly plan: Map<string, Allotment>,
    private readonly planFile: string,
  ) {}

  take(path: string): Allotment {
    const a = this.plan.get(path);
    if (!a)
      throw new Error(
        `${path} is not in the plan ${this.planFile} (added or renamed after the survey); survey and plan again to include it`,
      );
    return a;
  }

  settle(): void {}
}
