/** The pure engine: imports no Node, no Electron, no DOM. */
export * as linalg from './linalg';
export * as metrics from './metrics';
