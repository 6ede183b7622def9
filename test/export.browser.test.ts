import { readFile } from 'node:fs/promises';
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readCsv } from '../src/data/csv.js';
import { encodeRows, loadModel } from '../src/export/hand-off.js';
import { predictRows } from '../src/export/model-files.js';
import { CHROMIUM, browserRunsHere as runsHere, launchChromium } from './helpers/browser.js';
import { exportTinyStudies, type TinyExport } from './helpers/exports.js';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');

const TYPES: Record<string, string> = { '.html': 'text/html', '.js': 'text/javascript', '.mjs': 'text/javascript', '.json': 'application/json', '.bin': 'application/octet-stream' };

/** Serves examples/browser.html, tf.min.js, encode-row.mjs, and each export folder under /<task>/. */
function serve(exports: readonly TinyExport[]): Promise<Server> {
  const files: Record<string, string> = {
    '/browser.html': path.join(ROOT, 'examples/browser.html'),
    '/encode-row.mjs': path.join(ROOT, 'examples/encode-row.mjs'),
    '/tf.min.js': path.join(ROOT, 'node_modules/@tensorflow/tfjs/dist/tf.min.js'),
  };
  for (const { task, exportDir } of exports) for (const name of ['model.json', 'weights.bin', 'configuration.json']) files[`/${task}/${name}`] = path.join(exportDir, name);
  const server = createServer((request, response) => {
    const file = files[new URL(request.url ?? '/', 'http://localhost').pathname];
    if (!file) {
      response.writeHead(404).end();
      return;
    }
    readFile(file).then(
      (body) => response.writeHead(200, { 'content-type': TYPES[path.extname(file)] ?? 'application/octet-stream' }).end(body),
      () => response.writeHead(500).end(),
    );
  });
  return new Promise((resolve) => server.listen(0, '127.0.0.1', () => resolve(server)));
}

describe.runIf(runsHere)('the exported tfjs model in headless Chromium', () => {
  let exports: TinyExport[];
  let server: Server;
  let browser: Browser;

  beforeAll(async () => {
    exports = await exportTinyStudies();
    server = await serve(exports);
    browser = await launchChromium();
  });

  afterAll(async () => {
    await browser?.close();
    await new Promise((resolve) => server?.close(resolve));
  });

  it('examples/browser.html loads each model with tf.loadLayersModel over HTTP and gives the Node outputs within 1e-5', async () => {
    const { port } = server.address() as AddressInfo;
    for (const exported of exports) {
      const page = await browser.newPage();
      const errors: string[] = [];
      page.on('pageerror', (error) => errors.push(error.message));
      await page.goto(`http://127.0.0.1:${port}/browser.html?model=${exported.task}`);
      await page.waitForFunction(() => (globalThis as unknown as { document: { title: string } }).document.title === 'ready', undefined, { timeout: 60_000 });
      expect(errors, exported.task).toEqual([]);
      const table = await readCsv(exported.csv);
      const rows = table.rows.slice(0, 20);
      const inBrowser = await page.evaluate((r) => (globalThis as unknown as { predictRows: (rows: unknown[]) => Promise<number[]> }).predictRows(r), rows);
      // Reference: the same network run by tfjs in Node on rungwise's own encoding of the rows.
      const model = await loadModel(exported.exportDir);
      try {
        const x = encodeRows(model.configuration, rows);
        const inNode = predictRows(model.network, x, rows.length, model.configuration.recipe.inputCount);
        expect(inBrowser, exported.task).toHaveLength(inNode.length);
        inBrowser.forEach((value, i) => expect(Math.abs(value - inNode[i]!), `${exported.task} output ${i}`).toBeLessThan(1e-5));
      } finally {
        model.dispose();
      }
      await page.close();
    }
  });
});

if (!runsHere) {
  it.skip(`exported model in headless Chromium: skipped because ${CHROMIUM} is absent and CI is not set (install the Debian package chromium to run it)`, () => {});
}
