/**
 * The back end's file-access policy for save targets (issue 14, "the GUI batch creates its output folder"):
 * a target below folders that do not exist yet is accepted, as the CLI's `-o` accepts it, and is named
 * through the real path of its nearest existing folder, so a symlinked folder cannot hide where it lands.
 */
import { mkdirSync, mkdtempSync, realpathSync, symlinkSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { AccessPolicy } from '../../src-main/node/server/access';

const root = realpathSync(mkdtempSync(join(tmpdir(), 'rankfold-access-')));

describe('AccessPolicy save targets', () => {
  it('accepts a target three missing folders deep and records it', async () => {
    const policy = new AccessPolicy();
    const target = join(root, 'out', 'a', 'b', 'c');
    expect(await policy.allow(target, 'save')).toBe(target);
    expect(policy.saveTargets.has(target)).toBe(true);
  });

  it('names the target through the real path of its nearest existing folder', async () => {
    const real = join(root, 'real');
    mkdirSync(real);
    symlinkSync(real, join(root, 'link'));
    const policy = new AccessPolicy();
    expect(await policy.allow(join(root, 'link', 'x', 'y.rkf'), 'save')).toBe(join(real, 'x', 'y.rkf'));
  });

  it('still refuses to read what was not chosen', async () => {
    const policy = new AccessPolicy();
    await expect(policy.readable(join(root, 'nothing.png'))).rejects.toThrow(/does not exist/);
  });
});
