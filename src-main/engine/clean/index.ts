/** Cleaning: Gavish–Donoho thresholds, noise estimation, local low-rank denoising, banding. Pure TypeScript. */

export * from './banding';
export * from './colour';
export * from './gavish-donoho';
export { estimateNoiseSigma, MAD_TO_SIGMA, NOISE_KEEP_FRACTION } from './noise-estimate';
export {
  autoGroupParams,
  type BandResult,
  denoiseGroupsBand,
  GroupLowRank,
  type GroupParams,
  type GroupStats,
  groupMedianRuleSigma,
  matchGroup,
  referenceGrid,
  searchOffsets,
} from './patch-groups';
export * from './pipeline';
export { type EigenWorkspace, eigenWorkspace, symmetricEigen, tridiagonalEigen } from './symmetric-eigen';
export { autoTileSize, denoiseTiles, type TileStats } from './tiles';
