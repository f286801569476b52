/** Cleaning: Gavish–Donoho thresholds, noise estimation, local low-rank denoising, banding. Pure TypeScript. */

export * from './banding';
export * from './gavish-donoho';
export { GroupLowRank } from './group-low-rank';
export { medianInPlace, runningMedian } from './medians';
export { estimateNoiseSigma, MAD_TO_SIGMA, NOISE_KEEP_FRACTION } from './noise-estimate';
export {
  autoGroupParams,
  type BandResult,
  denoiseGroupsBand,
  type GroupParams,
  type GroupStats,
  groupMedianRuleSigma,
  matchGroup,
  referenceGrid,
  searchOffsets,
} from './patch-groups';
export * from './pipeline';
export { autoTileSize, denoiseTiles, type TileStats } from './tiles';
