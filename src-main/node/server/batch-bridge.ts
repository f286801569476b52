/**
 * Adapter from the app's Batch panel to the batch runner (src-main/node/batch), the same one
 * `rankfold batch` uses. Filled in as the runner lands.
 */
import { type BatchFileStatus, type BatchRequest, RankfoldError } from '../../contract';

export interface BatchProgress {
  stage: string;
  done: number;
  total: number;
  file?: string;
  message?: string;
}

export async function runBatchJob(
  _req: BatchRequest,
  _signal: AbortSignal,
  _progress: (e: BatchProgress) => void,
  _workersDir: string,
): Promise<{ files: BatchFileStatus[]; reportPath?: string; cancelled: boolean }> {
  throw new RankfoldError('This build has no batch runner yet.');
}
