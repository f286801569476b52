/**
 * CRC-32 as used by PNG, zlib and Ethernet (reflected polynomial 0xEDB88320, initial value and final
 * XOR 0xFFFFFFFF). References: ISO/IEC 3309 (HDLC); W3C PNG 2nd ed. §5.5 and Annex D, whose sample code
 * this table-driven form follows. Check value: crc32("123456789") = 0xCBF43926 (PNG Annex D, common practice).
 */
// Int32 table and state: the loop stays in 32-bit integer arithmetic (an unsigned state above 2^31 would be
// a double, and the optimised loop would fall back to slower code on the first such value).
const TABLE = (() => {
  const t = new Int32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c | 0;
  }
  return t;
})();

/** CRC-32 of `bytes` (optionally continuing from a previous `crc`). Returns an unsigned 32-bit integer. */
export function crc32(bytes: Uint8Array, crc = 0): number {
  const x = ~update(~(crc < 2147483648 ? crc : crc - 4294967296), bytes);
  return x < 0 ? x + 4294967296 : x;
}

/**
 * The table loop on an int32 state. Kept apart from the unsigned conversion: V8 optimises this loop while it
 * runs (on-stack replacement), before the code after it has type feedback, and an unsigned `>>> 0` there
 * deoptimised on every CRC ≥ 2^31.
 */
function update(c: number, bytes: Uint8Array): number {
  for (let i = 0; i < bytes.length; i++) c = TABLE[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return c;
}
