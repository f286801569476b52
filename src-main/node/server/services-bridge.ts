/**
 * Adapter from the app's session jobs to the shared services (compress, clean), so the page's figures
 * are the CLI's figures. Filled in as the services land.
 */
import type { DecodedImage } from '../../contract';
import { RankfoldError } from '../../contract';
import type { ProgressFn } from './factor';

export interface SessionServices {
  evaluate(image: DecodedImage, args: Record<string, unknown>, progress: ProgressFn): Promise<unknown>;
  clean(
    image: DecodedImage,
    args: Record<string, unknown>,
    progress: ProgressFn,
  ): Promise<{ images?: ArrayBuffer } & Record<string, unknown>>;
  save(
    image: DecodedImage,
    args: Record<string, unknown>,
    progress: ProgressFn,
  ): Promise<{ data?: ArrayBuffer } & Record<string, unknown>>;
}

export async function sessionServices(): Promise<SessionServices> {
  const missing = async (): Promise<never> => {
    throw new RankfoldError('This build has no compress/clean service yet.');
  };
  return { evaluate: missing, clean: missing, save: missing };
}
