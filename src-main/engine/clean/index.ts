/** Cleaning: Gavish–Donoho thresholds, noise estimation, local low-rank denoising, banding. Pure TypeScript. */

export * from './banding';
export * from './gavish-donoho';
export {
  denoiseLevels,
  joinLevels,
  type LevelJob,
  levelJobs,
  runLevelJobs,
} from './level-jobs';
export { runningMedian } from './medians';
export { estimateNoiseSigma, MAD_TO_SIGMA } from './noise-estimate';
export {
  autoGroupParams,
  denoiseBand,
  denoiseGroupsBand,
  type GroupParams,
} from './patch-groups';
export * from './pipeline';
export * from './row-bands';
export { denoiseTiles } from './tiles';
