/**
 * Child-process entry of the data-load benchmark: `<study.json>` prepares that study's data (and its
 * shared data set, as a run does) and reports time, peak resident memory and the prepared size; `--baseline` only loads the modules;
 * `--read-only <file.csv>` streams the file through the parser keeping nothing.
 */
import { prepareData, toSharedDataset } from '../src/data/prepare.js';
import { streamCsv } from '../src/data/source.js';
import { loadStudy } from '../src/study/load.js';

export interface LoadMeasurement {
  seconds: number;
  /** Peak resident set size of the process, bytes. */
  peakRssBytes: number;
  rows: number;
  inputCount: number;
  /** Bytes of the prepared float32 matrices (x and y of every split). */
  preparedBytes: number;
  /** 'reading' and 'preparing' events seen. */
  progressEvents: number;
}

const peak = (): number => process.resourceUsage().maxRSS * 1024;
const argument = process.argv[2]!;
let result: LoadMeasurement;
if (argument === '--baseline') {
  result = { seconds: 0, peakRssBytes: peak(), rows: 0, inputCount: 0, preparedBytes: 0, progressEvents: 0 };
} else if (argument === '--read-only') {
  let rows = 0;
  const started = performance.now();
  await streamCsv(process.argv[3]!, { header: () => undefined, row: () => void rows++ });
  result = { seconds: (performance.now() - started) / 1000, peakRssBytes: peak(), rows, inputCount: 0, preparedBytes: 0, progressEvents: 0 };
} else {
  const study = await loadStudy(argument);
  let progressEvents = 0;
  const started = performance.now();
  const { data } = await prepareData(study.definition.data, study.file, {
    onDataEvent: (event) => {
      if (event.type === 'reading' || event.type === 'preparing') progressEvents++;
    },
  });
  // As a run does next: the splits the workers read, in shared memory.
  const dataset = toSharedDataset(data, 'bench');
  const seconds = (performance.now() - started) / 1000;
  if (dataset.train.rows !== data.train.rows) throw new Error('the shared training split lost rows');
  const splits = [data.train, data.validation, data.test];
  result = {
    seconds,
    peakRssBytes: peak(),
    rows: splits.reduce((n, s) => n + s.rows, 0),
    inputCount: data.recipe.inputCount,
    preparedBytes: splits.reduce((n, s) => n + s.x.byteLength + s.y.byteLength, 0),
    progressEvents,
  };
}
process.send!(result, () => process.exit(0));
