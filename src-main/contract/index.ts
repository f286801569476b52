/**
 * The typed API that the renderer, IPC, the HTTP server and the CLI all speak.
 * It imports nothing from elsewhere in the project.
 */

export * from './api';
export * from './batch';
export * from './clean';
export * from './compress';
export * from './errors';
export * from './image';
export * from './inspect';
export * from './stack';
export * from './validate';
