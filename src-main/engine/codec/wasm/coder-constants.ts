/**
 * The integer constants of the range coder (../range-coder) and of coefficient coder 2 (../coeff-coder), in one
 * place for both of their forms: the TypeScript coder imports this file, and so does the AssemblyScript port
 * (./assembly/coder.ts). Plain integer literals only, so the file compiles as TypeScript and as
 * AssemblyScript alike. Every value here is part of the file format: changing one changes the bytes.
 */

// ---------------------------------------------------------------- range coder (../range-coder.ts)
/** Probabilities are PROB_BITS-bit fixed point. */
export const PROB_BITS = 15;
export const PROB_ONE = 1 << PROB_BITS;
export const PROB_INIT = PROB_ONE >>> 1;
/** P(bit = 0) is kept this far from 0 and from PROB_ONE. */
export const PROB_MARGIN = 32;
/** Largest magnitude the integer coder accepts (2^30); bigger values mean a corrupt stream. */
export const MAX_MAGNITUDE = 1 << 30;
/** Adaptation windows (observations) of the fast and the slow estimator of each context. */
export const FAST_WINDOW = 16;
export const SLOW_WINDOW = 128;
/** Integers per context: fast estimate, slow estimate, observation count. */
export const CTX = 3;
/** Unary magnitude bins before the Exp-Golomb escape, and the escape's context count. */
export const UNARY = 14;
export const EG_BITS = 32;
/** An Exp-Golomb prefix this long can only come from a corrupt stream. */
export const EG_PREFIX_LIMIT = 30;

// ---------------------------------------------------------------- coefficient coder 2 (../coeff-coder.ts)
/** Significance contexts per class: NB_BINS neighbourhood bins × PS_BINS parent/sibling bins. */
export const NB_BINS = 10;
export const PS_BINS = 3;
/** Neighbourhood sums below NB_SUMS go through the bin table; larger ones take bin NB_BINS − 1. */
export const NB_SUMS = 30;
/** Level group (1, 2, ≥3) × orientation class (HL/LH, HH). */
export const CLASSES = 6;
export const MAG_BINS = 6;
/** Sign contexts per orientation: 3 left-neighbour signs × 3 upper-neighbour signs. */
export const SIGN_CONTEXTS = 9;
/** Context classes of the LL band's integer model. */
export const LL_CLASSES = 5;
/** Least count of coded values in a band for it to carry a reconstruction offset. */
export const MIN_OFFSET_COUNT = 8;
/** Reconstruction offsets are multiples of 1/OFFSET_UNIT of the step, within [OFFSET_MIN, OFFSET_MAX]. */
export const OFFSET_UNIT = 32;
export const OFFSET_MIN = -16;
export const OFFSET_MAX = 20;

// ---------------------------------------------------------------- the WebAssembly port's interface
/** Errors the port reports to its host (through its imported `coderError`), which throws them as RangeErrors. */
export const ERR_MAGNITUDE_RANGE = 1;
export const ERR_EG_PREFIX = 2;
export const ERR_OFFSET = 3;
export const ERR_OUT_OF_MEMORY = 4;
/** A decode into an i16 q met a value it cannot hold (the host decodes into an i32 q instead). */
export const ERR_NARROW = 5;
/** Most bands the port takes (6 levels need 19). */
export const MAX_BANDS = 64;
/** Integers per band in the port's band table: x0, y0, w, h, orient, class, parent, sibling 1, sibling 2. */
export const BAND_FIELDS = 9;
/**
 * The port's fixed scratch area: its byte offset in the module's memory (below it: the module's own static
 * data), then the byte offset of each table inside it, and its size. The planes follow it.
 */
export const SCRATCH = 65536;
export const AT_RECIP_FAST = 0;
export const AT_RECIP_SLOW = 512;
export const AT_NB_LUT = 1024;
export const AT_BANDS = 1088;
export const AT_COUNTS = 3392;
export const AT_OFFSET_CODES = 3904;
export const AT_CONTEXTS = 4416;
export const SCRATCH_BYTES = 16384;
