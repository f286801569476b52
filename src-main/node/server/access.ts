/**
 * The back end's file-access policy: the page may read only what the user opened or chose in this session
 * (files and folders picked in a dialog or typed into the page, uploads) and the bundled samples, and may
 * write only where the user chose to save.
 */
import { realpath, stat } from 'node:fs/promises';
import { basename, dirname, join, resolve, sep } from 'node:path';
import { InputError, type PickRequest, UsageError } from '../../contract';

export class AccessPolicy {
  readonly chosenFiles = new Set<string>();
  readonly chosenFolders = new Set<string>();
  readonly saveTargets = new Set<string>();

  constructor(private readonly samplesDir?: string) {}

  /** Record a path the user chose; returns its real path. */
  async allow(path: string, kind: PickRequest['kind']): Promise<string> {
    const abs = resolve(path);
    if (kind === 'save') {
      // Missing folders on the way are created when the file (or the batch's output folder) is written,
      // as the CLI does; the target is named through the real path of its nearest existing folder.
      const target = await throughExisting(abs);
      this.saveTargets.add(target);
      return target;
    }
    const real = await realpath(abs).catch(() => {
      throw new InputError(abs, 'does not exist');
    });
    const st = await stat(real);
    if (kind === 'folder') {
      if (!st.isDirectory()) throw new InputError(real, 'is not a folder');
      this.chosenFolders.add(real);
    } else {
      if (!st.isFile()) throw new InputError(real, 'is not a file');
      this.chosenFiles.add(real);
    }
    return real;
  }

  isInside(file: string, folder: string) {
    return file === folder || file.startsWith(folder.endsWith(sep) ? folder : folder + sep);
  }

  /** Real path of a file the user may read, or a refusal naming it. */
  async readable(path: string): Promise<string> {
    const real = await realpath(resolve(path)).catch(() => {
      throw new InputError(path, 'does not exist');
    });
    const samples = this.samplesDir ? await realpath(this.samplesDir).catch(() => undefined) : undefined;
    const ok =
      this.chosenFiles.has(real) ||
      [...this.chosenFolders].some((f) => this.isInside(real, f)) ||
      (samples !== undefined && this.isInside(real, samples));
    if (!ok)
      throw new UsageError(
        `${path}: not opened or chosen in this session; open it through the page or a dialog first`,
      );
    return real;
  }
}

/** `abs` with its nearest existing ancestor replaced by that folder's real path. */
async function throughExisting(abs: string): Promise<string> {
  const rest: string[] = [];
  for (let dir = dirname(abs), name = basename(abs); ; name = basename(dir), dir = dirname(dir)) {
    rest.unshift(name);
    const real = await realpath(dir).catch(() => undefined);
    if (real !== undefined) return join(real, ...rest);
    if (dirname(dir) === dir) throw new InputError(abs, 'no folder on this path exists');
  }
}
