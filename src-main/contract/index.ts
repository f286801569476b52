/**
 * The typed API that the renderer, IPC, the HTTP server and the CLI all speak.
 * It imports nothing from elsewhere in the project.
 */

export * from './api';
export * from './batch';
export * from './budget';
export * from './cautions';
export * from './clean';
export * from './compress';
export * from './errors';
export * from './factor-set';
export * from './image';
export * from './inspect';
export * from './methods';
export * from './options';
export * from './rankfold-api';
export * from './replies';
export * from './stack';
export * from './upload';
export * from './validate';
