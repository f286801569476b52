/** The cautions users see wherever output is lossy or pixels are cleaned: the CLI, the app and batch reports. */

/** The caution shown wherever output is lossy. */
export const LOSSY_CAUTION =
  'Caution: this output is lossy and changes pixel data. Keep preservation masters lossless; medical, forensic and legal ' +
  "images need your institution's approval. Follow your local digitisation guidelines.";

/** The caution shown wherever pixels are cleaned. */
export const CLEANING_CAUTION =
  'Caution: cleaning alters pixel data. Keep the original and the removed part (--removed) where your institution ' +
  'requires it; never clean preservation masters, medical, forensic or legal images without approval. Follow your local digitisation guidelines.';
