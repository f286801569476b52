/**
 * UTF-8 encode/decode without relying on the TextEncoder/TextDecoder globals, which the ES2022 library
 * (the engine's and contract's type environment) does not declare. Both behave as WHATWG TextEncoder and
 * TextDecoder do (Encoding Standard, §4 "UTF-8"; RFC 3629 §3):
 * - encoding writes a lone surrogate as U+FFFD;
 * - decoding replaces each malformed sequence (a stray continuation byte, a truncated sequence, an overlong
 *   form, an encoded surrogate, a value above U+10FFFF, the bytes C0, C1, F5–FF) by one U+FFFD per maximal
 *   subpart (Unicode 15 §3.9, "U+FFFD Substitution of Maximal Subparts"), or with `fatal` throws.
 */

const REPLACEMENT = 0xfffd;

export function utf8Encode(text: string): Uint8Array {
  const out: number[] = [];
  for (const ch of text) {
    let c = ch.codePointAt(0) ?? REPLACEMENT;
    if (c >= 0xd800 && c <= 0xdfff) c = REPLACEMENT;
    if (c < 0x80) out.push(c);
    else if (c < 0x800) out.push(0xc0 | (c >> 6), 0x80 | (c & 63));
    else if (c < 0x10000) out.push(0xe0 | (c >> 12), 0x80 | ((c >> 6) & 63), 0x80 | (c & 63));
    else out.push(0xf0 | (c >> 18), 0x80 | ((c >> 12) & 63), 0x80 | ((c >> 6) & 63), 0x80 | (c & 63));
  }
  return Uint8Array.from(out);
}

/**
 * Decode UTF-8 bytes (the WHATWG "UTF-8 decoder" state machine). Malformed input becomes U+FFFD, or with
 * `fatal: true` throws an Error naming the byte offset.
 */
export function utf8Decode(bytes: Uint8Array, options: { fatal?: boolean } = {}): string {
  const parts: string[] = [];
  let chunk: number[] = [];
  let cp = 0;
  let needed = 0;
  let seen = 0;
  let lower = 0x80;
  let upper = 0xbf;
  const emit = (c: number) => {
    chunk.push(c);
    if (chunk.length >= 4096) {
      parts.push(String.fromCodePoint(...chunk));
      chunk = [];
    }
  };
  const malformed = (at: number) => {
    if (options.fatal) throw new Error(`malformed UTF-8 at byte ${at}`);
    emit(REPLACEMENT);
  };
  for (let i = 0; i < bytes.length; i++) {
    const b = bytes[i];
    if (needed === 0) {
      if (b < 0x80) emit(b);
      else if (b >= 0xc2 && b <= 0xdf) {
        needed = 1;
        cp = b & 0x1f;
      } else if (b >= 0xe0 && b <= 0xef) {
        if (b === 0xe0) lower = 0xa0; // overlong 3-byte forms
        if (b === 0xed) upper = 0x9f; // encoded surrogates
        needed = 2;
        cp = b & 0x0f;
      } else if (b >= 0xf0 && b <= 0xf4) {
        if (b === 0xf0) lower = 0x90; // overlong 4-byte forms
        if (b === 0xf4) upper = 0x8f; // above U+10FFFF
        needed = 3;
        cp = b & 0x07;
      } else malformed(i);
      continue;
    }
    if (b < lower || b > upper) {
      // The sequence so far is one maximal subpart: replace it, then read this byte afresh.
      cp = needed = seen = 0;
      lower = 0x80;
      upper = 0xbf;
      malformed(i);
      i--;
      continue;
    }
    lower = 0x80;
    upper = 0xbf;
    cp = (cp << 6) | (b & 0x3f);
    if (++seen === needed) {
      emit(cp);
      cp = needed = seen = 0;
    }
  }
  if (needed !== 0) malformed(bytes.length);
  parts.push(String.fromCodePoint(...chunk));
  return parts.join('');
}
