/**
 * The Save panel: the compressed file or the expanded image at the current budget, the cleaned scan or
 * the part cleaning removed; written to a typed or chosen path, or downloaded (browser mode, no path).
 * Above the button, one sentence says what will be written (./save-plan.ts).
 */
import type { CleanSettings } from '../src-main/contract';
import { bind } from './bind';
import { CLEANING_CAUTION, LOSSY_CAUTION } from './captions';
import { formatBytes } from './format';
import type { Readouts } from './readouts';
import { type SaveKind, savePlanText, suggestedName } from './save-plan';
import type { PageState } from './state';
import { newJob, type StatusBar } from './status';
import type { PageApi } from './transport';

export interface SavePanel {
  /** Run a save as the Save button does (the desktop menu's Save). */
  run(): void;
  /** Rewrite the sentence that says what Save will write. */
  refresh(): void;
}

export function setupSavePanel(
  api: PageApi,
  state: PageState,
  bar: StatusBar,
  cleanSettings: () => CleanSettings,
  readouts: Readouts,
): SavePanel {
  const el = bind(document, {
    path: 'input#save-path',
    force: 'input#save-force',
    run: 'button#save-run',
    result: '#save-result',
    caution: '#save-caution',
    plan: '#save-plan',
  });
  el.caution.textContent = LOSSY_CAUTION;
  const chosenKind = () =>
    (document.querySelector<HTMLInputElement>('input[name="save-kind"]:checked')?.value ?? 'rkf') as SaveKind;

  const refresh = () => {
    const s = state.scan;
    el.plan.textContent = s
      ? savePlanText({
          kind: chosenKind(),
          scanName: s.name,
          bitDepth: s.bitDepth as 8 | 16,
          budget: state.budget,
          tiled: state.tiled,
          tile: state.tile,
          shown: readouts.current(),
          cleanedReady: state.cleaned !== undefined,
        })
      : 'Open a scan to save it.';
  };
  readouts.onChange(refresh);
  for (const r of document.querySelectorAll<HTMLInputElement>('input[name="save-kind"]'))
    r.addEventListener('change', refresh);
  document.getElementById('tab-save')?.addEventListener('click', refresh);

  el.run.addEventListener('click', async () => {
    const s = state.scan;
    if (!s) return bar.show('Open a scan first.', true);
    const kind = chosenKind();
    const typed = el.path.value.trim();
    const job = newJob();
    bar.busy(job, `Saving ${suggestedName(kind, s.name, s.bitDepth as 8 | 16)}…`, 'save');
    try {
      let path: string | undefined;
      if (typed || api.transport() === 'ipc') {
        const chosen = await api.pick({ kind: 'save', suggested: typed || undefined });
        if (!chosen.path && api.transport() === 'ipc') return bar.busy(undefined);
        path = chosen.path;
      }
      const r = await api.save({
        scanId: s.scanId,
        kind,
        budget: state.budget,
        tile: state.tiled ? state.tile : 0,
        settings: kind === 'cleaned' || kind === 'removed' ? cleanSettings() : undefined,
        path,
        force: el.force.checked,
        job,
      });
      el.result.replaceChildren(`${r.path ?? r.fileName}: ${formatBytes(r.bytes)}\n`);
      if (r.downloadId && api.downloadUrl) {
        const a = document.createElement('a');
        a.href = api.downloadUrl(r.downloadId);
        a.download = r.fileName;
        a.textContent = `Download ${r.fileName}`;
        el.result.append(a);
        a.click();
      }
      // The page's own wording of the caution the back end returned (the contract's names CLI flags).
      el.caution.textContent = kind === 'cleaned' || kind === 'removed' ? CLEANING_CAUTION : LOSSY_CAUTION;
      bar.show(`Saved ${r.fileName}.`);
    } catch (err) {
      bar.fail(err);
    } finally {
      bar.busy(undefined);
    }
  });

  refresh();
  return { run: () => el.run.click(), refresh };
}
