import { existsSync } from 'node:fs';
import { writeFile } from 'node:fs/promises';
import path from 'node:path';
import { renderSvg } from '../plot/render.js';
import { buildReport, type RenderedChart } from '../plot/report.js';
import { studyCharts } from '../plot/specs.js';
import { writeFolderAtomically } from '../files/atomic-folder.js';
import { StudyStore } from '../store/study-store.js';

export interface PlotOptions {
  /** Run directory holding `study.json`. */
  dir: string;
  /** Folder to write the charts into. @default `<dir>/plots` */
  out?: string;
}

/**
 * Draws the study's charts: one `.svg` and one Vega-Lite `.vl.json` per chart, and `report.html`
 * with everything inlined. Reads only the study file. The folder is written whole beside the output
 * and renamed into place, so a failure leaves no half-written chart.
 */
export async function plot(options: PlotOptions): Promise<{ files: string[] }> {
  const study = await StudyStore.read(options.dir);
  const out = path.resolve(options.out ?? path.join(options.dir, 'plots'));
  const charts = studyCharts(study);
  const rendered: RenderedChart[] = [];
  for (const chart of charts) rendered.push({ name: chart.name, title: chart.title, svg: await renderSvg(chart.spec) });

  // An earlier report folder is replaced; a folder of the user's own is not.
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
      await put('report.html', buildReport(study, rendered));
      return written;
    },
    'plot report',
  );
  return { files: names.map((name) => path.join(out, name)) };
}
