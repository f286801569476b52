// The embedded kernels' base64 decode (src-main/engine/linalg/wasm/runtime.ts): Node's native Buffer where the
// host has one, the engine's own loop elsewhere (a browser page). Both must give the same bytes.
import { describe, expect, it } from 'vitest';
import { wasmBase64 as coder } from '../../src-main/engine/codec/wasm/generated/coder';
import { wasmBase64 as kernels } from '../../src-main/engine/linalg/wasm/generated/kernels';
import { decodeBase64, decodeBase64Js } from '../../src-main/engine/linalg/wasm/runtime';

const bytes = (s: string) => Array.from(s, (c) => c.charCodeAt(0));

describe('decodeBase64', () => {
  // RFC 4648 §10 test vectors (every padding case).
  const vectors: Array<[string, string]> = [
    ['', ''],
    ['Zg==', 'f'],
    ['Zm8=', 'fo'],
    ['Zm9v', 'foo'],
    ['Zm9vYg==', 'foob'],
    ['Zm9vYmE=', 'fooba'],
    ['Zm9vYmFy', 'foobar'],
  ];
  it.each(vectors)('decodes %j to %j on both paths (RFC 4648 §10)', (b64, text) => {
    expect(Array.from(decodeBase64(b64))).toEqual(bytes(text));
    expect(Array.from(decodeBase64Js(b64))).toEqual(bytes(text));
  });

  it('gives every byte value the same way on both paths, as a plain Uint8Array of its own', () => {
    const all = Uint8Array.from({ length: 256 * 3 }, (_, i) => (i * 7) & 255);
    const b64 = Buffer.from(all).toString('base64');
    const native = decodeBase64(b64);
    expect(native.constructor).toBe(Uint8Array);
    expect(native.byteOffset).toBe(0);
    expect(native.buffer.byteLength).toBe(all.length);
    expect(Array.from(native)).toEqual(Array.from(all));
    expect(Array.from(decodeBase64Js(b64))).toEqual(Array.from(all));
  });

  it('decodes the embedded kernels to WebAssembly modules, the same bytes on both paths', () => {
    for (const s of [kernels, coder]) {
      const native = decodeBase64(s);
      expect(Array.from(native.subarray(0, 4))).toEqual([0, 0x61, 0x73, 0x6d]); // "\0asm", WebAssembly Core §5.5.16
      expect(native).toEqual(decodeBase64Js(s));
    }
  });
});
