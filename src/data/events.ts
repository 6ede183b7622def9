/** What reading and preparing a data set tells its observer (the CLI's progress line, a test, a bench). */
export type DataEvent =
  | { type: 'reading'; file: string; bytesRead: number; totalBytes: number }
  | { type: 'preparing'; file: string; step: 'typing' | 'splitting' | 'encoding'; done: number; total: number }
  /** How an odd but readable input was read (delimiter, decimal commas, cells read as missing). */
  | { type: 'note'; file: string; message: string }
  /** A column that should likely not be a feature (a date, an identifier, too many categories), before training. */
  | { type: 'warning'; file: string; message: string }
  | { type: 'ready'; file: string; rows: number; columns: number; seconds: number };

export type DataObserver = (event: DataEvent) => void;

/** Options of the functions that read and prepare data. */
export interface DataLoadOptions {
  /** Aborts reading and preparing; the promise rejects with the signal's reason and nothing is kept. */
  signal?: AbortSignal;
  onDataEvent?: DataObserver;
  /**
   * The data of a study that already started (`resume`, `export`): a text column over
   * `data.maxDistinctShare` is warned about instead of refused. @default false
   */
  started?: boolean;
}
