import { existsSync, statSync, unwatchFile, watchFile } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import path from 'node:path';
import { studyImportance } from '../plot/analysis/study-importance.js';
import { digestFindings, studyDigest } from '../plot/digest.js';
import { renderSvg } from '../plot/render.js';
import { buildReport, type RenderedChart } from '../plot/report.js';
import { studyCharts, type Chart, type ChartReferences } from '../plot/specs.js';
import { writeFolderAtomically } from '../files/atomic-folder.js';
import { StudyStore, studyFilePath } from '../store/study-store.js';

export interface PlotOptions {
  /** Run directory holding `study.json`. */
  dir: string;
  /** Folder to write the charts into. @default `<dir>/plots` */
  out?: string;
  /** Keep drawing the report again whenever the study file changes, until `signal` aborts. */
  watch?: boolean;
  /** How often `watch` looks at the study file's modification time. @default 2000 */
  pollMilliseconds?: number;
  /** Ends `watch`. */
  signal?: AbortSignal;
  /** Called after each report is written (the first and every refresh). */
  onWritten?: (files: string[]) => void;
  /**
   * Baselines and a noise band for the winner drawn into the score charts. Without a band, the
   * winner's standard error over folds is drawn when the study has folds.
   */
  references?: ChartReferences;
}

/** Seconds between reloads of a report page open in a browser while `plot --watch` runs. */
export const WATCH_PAGE_REFRESH_SECONDS = 5;

/** Renders each chart to SVG. */
export async function renderCharts(charts: readonly Chart[]): Promise<RenderedChart[]> {
  const rendered: RenderedChart[] = [];
  for (const chart of charts) rendered.push({ name: chart.name, title: chart.title, svg: await renderSvg(chart.spec) });
  return rendered;
}

/**
 * Writes a report folder whole: one `.svg` and one Vega-Lite `.vl.json` per chart, and `report.html`.
 * An earlier report folder is replaced; a folder of the user's own is not.
 */
export async function writeReportFolder(out: string, charts: readonly Chart[], rendered: readonly RenderedChart[], html: string): Promise<string[]> {
  const names = await writeFolderAtomically(
    out,
    (existing) => existsSync(path.join(existing, 'report.html')),
    async (partial) => {
      const written: string[] = [];
      const put = async (name: string, content: string): Promise<void> => {
        await writeFile(path.join(partial, name), content, 'utf8');
        written.push(name);
      };
      for (const [i, chart] of rendered.entries()) {
        await put(`${chart.name}.svg`, chart.svg);
        await put(`${chart.name}.vl.json`, `${JSON.stringify(charts[i]!.spec, null, 2)}\n`);
      }
      await put('report.html', html);
      return written;
    },
    'plot report',
  );
  return names.map((name) => path.join(out, name));
}

async function drawOnce(options: PlotOptions, out: string): Promise<string[]> {
  const study = await StudyStore.read(options.dir);
  const importance = studyImportance(study);
  const charts = studyCharts(study, importance, options.references);
  const rendered = await renderCharts(charts);
  const html = buildReport(study, rendered, {
    findings: digestFindings(studyDigest(study, importance)),
    ...(options.watch ? { refreshSeconds: WATCH_PAGE_REFRESH_SECONDS } : {}),
  });
  return writeReportFolder(out, charts, rendered, html);
}

/**
 * Draws the study's report from the study file alone (never writing it). The folder is written
 * whole beside the output and renamed into place, so a failure leaves no half-written chart.
 * With `watch`, the study file's modification time is polled and the report drawn again after each
 * change (a page open in a browser reloads itself), until `signal` aborts; returns the last files.
 */
export async function plot(options: PlotOptions): Promise<{ files: string[] }> {
  const out = path.resolve(options.out ?? path.join(options.dir, 'plots'));
  const studyFile = studyFilePath(options.dir);
  const modifiedAt = (): number => (existsSync(studyFile) ? statSync(studyFile).mtimeMs : 0);
  const drawnFrom = modifiedAt();
  let files = await drawOnce(options, out);
  options.onWritten?.(files);
  if (!options.watch || options.signal?.aborted) return { files };
  await new Promise<void>((resolve, reject) => {
    let drawing: Promise<void> | undefined;
    let again = false;
    const redraw = (): void => {
      if (drawing) {
        again = true;
        return;
      }
      drawing = drawOnce(options, out)
        .then((written) => {
          files = written;
          options.onWritten?.(written);
        })
        .catch((error: unknown) => {
          stop();
          reject(error);
        })
        .finally(() => {
          drawing = undefined;
          if (again) {
            again = false;
            redraw();
          }
        });
    };
    const listener = (now: { mtimeMs: number }, before: { mtimeMs: number }): void => {
      if (now.mtimeMs !== before.mtimeMs && now.mtimeMs !== 0) redraw();
    };
    const stop = (): void => {
      unwatchFile(studyFile, listener);
      options.signal?.removeEventListener('abort', finish);
    };
    const finish = (): void => {
      stop();
      void Promise.resolve(drawing).then(() => resolve());
    };
    watchFile(studyFile, { interval: options.pollMilliseconds ?? 2000, persistent: true }, listener);
    options.signal?.addEventListener('abort', finish, { once: true });
    // A change while the first report was being drawn.
    if (modifiedAt() !== drawnFrom) redraw();
  });
  return { files };
}
