/** Joint low-rank models of scan series (stack mode). Pure TypeScript over typed arrays. */
export {
  centredFrames,
  eigenFrameOf,
  eigenFrames,
  eigenFramesForEnergy,
  type FrameModeOptions,
  type FrameModeSvd,
  frameModeSvd,
  rebuildFrame,
  seriesMeans,
} from './frame-svd';
export {
  driftingSpecimen,
  formPages,
  lowRankSeries,
  phantomSlices,
  type SeriesOptions,
  type SyntheticSeries,
  seededNormal,
  seededRandom,
} from './synthetic';
export { sequentialHosvd, type TuckerResult, truncatedHosvd, tuckerFrame } from './tucker';
