/**
 * The container headers' JSON as ASCII bytes: every non-ASCII character (and DEL) is written as a \uXXXX
 * escape, which is still valid JSON (ECMA-404 §9, RFC 8259 §7) and valid UTF-8, so a header reads the
 * same in any decoder. One writer for the image and stack layouts; the image layout's strict reader.
 */

/** JSON.stringify(value) with U+007F–U+FFFF (UTF-16 code units, surrogates included) escaped, one byte per character. */
export function asciiJson(value: unknown): Uint8Array {
  const text = JSON.stringify(value).replace(
    /[\u007f-\uffff]/g,
    (ch) => `\\u${ch.charCodeAt(0).toString(16).padStart(4, '0')}`,
  );
  const out = new Uint8Array(text.length);
  for (let i = 0; i < text.length; i++) out[i] = text.charCodeAt(i);
  return out;
}

/** Parse an ASCII JSON header. @throws SyntaxError on a byte outside printable ASCII (newline allowed) or bad JSON. */
export function parseAsciiJson(bytes: Uint8Array): unknown {
  let text = '';
  for (let i = 0; i < bytes.length; i += 8192) {
    const part = bytes.subarray(i, i + 8192);
    for (let k = 0; k < part.length; k++)
      if (part[k] > 0x7e || (part[k] < 0x20 && part[k] !== 0x0a)) throw new SyntaxError('non-ASCII header');
    text += String.fromCharCode(...part);
  }
  return JSON.parse(text);
}
