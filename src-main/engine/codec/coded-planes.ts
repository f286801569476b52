/**
 * The quantised coefficients of the most recent wavelet plane encodes, kept so that decoding those exact bytes
 * again (the report's check of the file just written) can skip the range decoder. Decoding is a pure function
 * of (bytes, width, height, step, coder), and the range coder is lossless: the decoder would recover exactly
 * the q and reconstruction offsets the encoder coded. So a plane whose payload equals, byte for byte, one
 * recorded here (same size, step and coder) is rebuilt from the recorded coefficients by the decoder's own
 * dequantise + inverse transform, and its samples are those of a full decode (test/codec/coded-planes.test.ts
 * checks this bit for bit against real decodes).
 *
 * Recording is opt-in ({@link recordingCodes}), bounded to {@link MAX_KEPT} encodes, and cleared by
 * {@link forgetCodes}, so the stack coder and other callers keep no coefficients alive.
 */
import type { CodedCoefficients, PlaneCoder } from './wavelet-plane';

/** Most recent encodes kept: one encode of a colour scan's three planes, plus the one before it. */
const MAX_KEPT = 6;

interface Kept {
  bytes: Uint8Array;
  width: number;
  height: number;
  step: number;
  coder: PlaneCoder;
  coded: CodedCoefficients;
}

let recording = 0;
const kept: Kept[] = [];

/** Run `f`, keeping the coefficients of the plane encodes it makes (the last {@link MAX_KEPT}). */
export function recordingCodes<T>(f: () => T): T {
  recording++;
  try {
    return f();
  } finally {
    recording--;
  }
}

/** Called by the plane coder after each encode; keeps it only inside {@link recordingCodes}. */
export function rememberCode(k: Kept): void {
  if (recording === 0) return;
  kept.push(k);
  if (kept.length > MAX_KEPT) kept.shift();
}

/** The recorded encode whose bytes equal `bytes` at this size, step and coder, if any. */
export function recallCode(
  bytes: Uint8Array,
  width: number,
  height: number,
  step: number,
  coder: PlaneCoder,
): CodedCoefficients | undefined {
  for (let j = kept.length - 1; j >= 0; j--) {
    const k = kept[j];
    if (k.width !== width || k.height !== height || k.step !== step || k.coder !== coder) continue;
    if (k.bytes === bytes || sameBytes(k.bytes, bytes)) return k.coded;
  }
  return undefined;
}

/** Drop every recorded encode. */
export function forgetCodes(): void {
  kept.length = 0;
}

function sameBytes(a: Uint8Array, b: Uint8Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}
