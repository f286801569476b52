/**
 * The typed API that the renderer, IPC, the HTTP server and the CLI all speak.
 * It imports nothing from elsewhere in the project.
 */
export * from './errors';
export * from './validate';
export * from './image';
export * from './compress';
export * from './batch';
export * from './api';
export * from './inspect';
export * from './stack';
export * from './clean';
