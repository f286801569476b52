/**
 * The API contract's validators and binary factor sets, and the factors the page receives.
 * Outside references: numpy 1.24.2 linalg.svd (LAPACK dgesdd) singular values of camera.png in
 * test/fixtures/reference/rank_approx_images.json; error text format after sharp's lib/is.js
 * (`Expected <what> for <name> but received <value> of type <type>`).
 */
import { describe, expect, it } from 'vitest';
import {
  checkBudget,
  checkCleanSettings,
  checkTile,
  decodeFactorSet,
  encodeFactorSet,
  validateRequest,
} from '../../src-main/contract';
import { decodeImage } from '../../src-main/node/image/decode';
import { factorScan, readyEngine } from '../../src-main/node/server/factor';
import { image, reference } from '../helpers/fixtures';

describe('request validators', () => {
  it('budgets', () => {
    expect(checkBudget({ kind: 'bytes', bytes: 250000 })).toEqual({ kind: 'bytes', bytes: 250000 });
    expect(checkBudget({ kind: 'psnr', db: 38 })).toEqual({ kind: 'psnr', db: 38 });
    expect(() => checkBudget({ kind: 'bytes', bytes: 10 })).toThrow(
      'Expected a budget of at least 64 bytes for budget but received 10 of type number',
    );
    expect(() => checkBudget({ kind: 'percent', percent: 150 })).toThrow(
      'Expected a percentage between 0.001 and 100 for budget but received 150 of type number',
    );
    expect(() => checkBudget({ kind: 'jpeg', q: 1 })).toThrow(
      'Expected one of rank, bytes, percent, bpp, psnr, ssim for budget.kind but received "jpeg" of type string',
    );
    expect(() => checkBudget({ kind: 'rank', rank: 3, extra: 1 })).toThrow(
      'Unexpected field "extra" in budget; allowed: kind, rank',
    );
  });
  it('tiles and clean settings', () => {
    expect(checkTile(0)).toBe(0);
    expect(checkTile('auto')).toBe('auto');
    expect(checkTile(64)).toBe(64);
    expect(() => checkTile(1000)).toThrow(
      'Expected integer between 16 and 512 for tile but received 1000 of type number',
    );
    expect(checkCleanSettings({ noise: 'auto', banding: 'both' })).toEqual({
      noise: 'auto',
      banding: 'both',
    });
    expect(() => checkCleanSettings({ noise: -1, banding: 'both' })).toThrow(
      'Expected auto, off or a noise σ above 0 in grey levels (e.g. 8) for noise but received -1 of type number',
    );
    expect(() => checkCleanSettings({ noise: 'auto', banding: 'sideways' })).toThrow(
      'Expected one of auto, rows, columns, both, off for banding but received "sideways" of type string',
    );
  });
  it('methods are an allow-list; ids and paths are checked', () => {
    expect(() => validateRequest('__proto__', {})).toThrow('Unknown API method "__proto__"');
    expect(() => validateRequest('cancel', '../../x')).toThrow(
      'Expected an id of 1–64 letters, digits, - or _ for job but received "../../x" of type string',
    );
    expect(() => validateRequest('dropped', 'a\0b')).toThrow(
      'Expected a path without NUL characters for path',
    );
    expect(validateRequest('listSamples', undefined)).toEqual({ method: 'listSamples', payload: undefined });
    expect(() => validateRequest('listSamples', { x: 1 })).toThrow('listSamples takes no arguments');
  });
  it('desktop-only methods are not carried over HTTP', () => {
    expect(validateRequest('dropped', '/tmp/a.png', 'ipc').method).toBe('dropped');
    expect(() => validateRequest('dropped', '/tmp/a.png', 'http')).toThrow('Unknown API method "dropped"');
    expect(() => validateRequest('openReport', 'abc', 'http')).toThrow('Unknown API method "openReport"');
  });
});

describe('factor sets', () => {
  it('round-trip header and blocks without copying', () => {
    const bytes = encodeFactorSet(
      { width: 3, height: 2, channels: ['Y'], ranks: [1], energy: [14], peak: 255, complete: false },
      {
        'sigma.0': Float32Array.of(3.5),
        'u.0': Float32Array.of(0.6, 0.8),
        'src.0': Uint8Array.of(1, 2, 3, 4, 5, 6),
        'x.0': Uint16Array.of(65535),
      },
    );
    const { header, arrays } = decodeFactorSet(bytes.buffer as ArrayBuffer);
    expect(header.width).toBe(3);
    expect(Array.from(arrays['u.0'])).toEqual([Math.fround(0.6), Math.fround(0.8)]);
    expect(Array.from(arrays['src.0'])).toEqual([1, 2, 3, 4, 5, 6]);
    expect(Array.from(arrays['x.0'])).toEqual([65535]);
    expect(() => decodeFactorSet(bytes.buffer.slice(0, bytes.length - 8) as ArrayBuffer)).toThrow(
      'factor set block x.0 is truncated',
    );
    expect(() => decodeFactorSet(new ArrayBuffer(4))).toThrow('factor set is truncated (under 8 bytes)');
  });

  it("camera.png: the page's σ match numpy's to 1e-4 relative and ‖A‖_F² matches the pixel sum of squares", async () => {
    await readyEngine();
    const img = await decodeImage(image('camera.png'));
    const { header, arrays } = decodeFactorSet(factorScan(img, 20).buffer as ArrayBuffer);
    const ref = reference('rank_approx_images.json').images.find(
      (i: { file: string }) => i.file === 'camera.png',
    );
    const sigmaRef: number[] =
      typeof ref.first_20_singular_values === 'string'
        ? JSON.parse(ref.first_20_singular_values)
        : ref.first_20_singular_values;
    const sigma = Array.from(arrays['sigma.0']);
    expect(sigma).toHaveLength(20);
    for (let i = 0; i < 10; i++) expect(Math.abs(sigma[i] - sigmaRef[i]) / sigmaRef[i]).toBeLessThan(1e-4);
    expect(header.energy[0]).toBe(Number(ref.pixel_sum_of_squares));
    // Layers are unit vectors: ‖u_1‖ = ‖v_1‖ = 1 (to f32 precision).
    const u = arrays['u.0'].subarray(0, 512);
    expect(Math.sqrt(Array.from(u).reduce((s, x) => s + x * x, 0))).toBeCloseTo(1, 5);
  });
});
