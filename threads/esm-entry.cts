/**
 * The file piscina loads in every pool thread. Piscina tries `require()` on its worker file
 * before `import()`, and Node 20's `require()` of an ES module (require(esm)) now and then
 * aborts the whole process with a native assertion in its module facade. This CommonJS file
 * is required safely and loads the real ES-module entry point, named in `workerData.entry`
 * as a file URL, with `import()`.
 */
import { workerData } from 'node:worker_threads';

type Handler = (task: unknown) => unknown;

function entryUrl(): string {
  const data = workerData as { entry?: unknown } | undefined;
  if (typeof data?.entry !== 'string') throw new Error('esm-entry: workerData.entry must name the worker module as a file URL');
  return data.entry;
}

let handler: Promise<Handler> | undefined;

async function loadHandler(): Promise<Handler> {
  const loaded = (await import(entryUrl())) as { default?: unknown };
  if (typeof loaded.default !== 'function') throw new Error(`esm-entry: ${entryUrl()} has no default-exported function`);
  return loaded.default as Handler;
}

export = async function esmEntry(task: unknown): Promise<unknown> {
  handler ??= loadHandler();
  return (await handler)(task);
};
