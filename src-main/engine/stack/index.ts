/** Joint low-rank models of scan series (stack mode). Pure TypeScript over typed arrays. */
export {
  centredFrames,
  eigenFrameOf,
  eigenFrames,
  type FrameModeOptions,
  type FrameModeSvd,
  frameModeSvd,
  rebuildFrame,
  seriesMeans,
} from './frame-svd';
