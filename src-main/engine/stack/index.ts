/** Joint low-rank models of scan series (stack mode). Pure TypeScript over typed arrays. */
export { centredFrames, eigenFrames, frameModeSvd, rebuildFrame } from './frame-svd';
