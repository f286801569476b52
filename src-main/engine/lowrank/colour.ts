/** The JFIF-table colour transform, now in the engine's one colour module (src-main/engine/colour). */
export {
  chromaOffset,
  RGB_TO_YCBCR,
  rgbToYcbcr,
  roundInto,
  toSamples,
  YCBCR_ERROR_WEIGHTS,
  YCBCR_TO_RGB,
  ycbcrToRgb,
  ycbcrToRgbSamples,
} from '../colour';
