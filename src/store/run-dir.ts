/**
 * The one home of a run directory's layout. Every module that reads or writes inside a run
 * directory takes its paths from here.
 *
 *   study.json        the study file (lowdb), written only by the coordinating process
 *   study.json.prev   the previous save, hard-linked before each write
 *   curves.jsonl      append-only per-epoch curve log
 *   splits.json       which data rows went to training, validation, test (and folds), written once
 *   definition.json   the full definition rungwise wrote for a study from its data alone (`run data.csv --target y`)
 *   study.lock        the lock (proper-lockfile) and study.owner.json, who holds it
 *   checkpoints/      trial-<id>.ckpt, one per trial that may still continue or ranks among the kept
 *   export/rank-<n>/  default target of `rungwise export`
 *   export/ensemble-<k>/  default target of `rungwise export --ensemble <k>`
 *   plots/            default target of `rungwise plot`
 */
import path from 'node:path';

export const STUDY_FILE_NAME = 'study.json';
export const PREVIOUS_STUDY_FILE_NAME = 'study.json.prev';
export const CURVE_LOG_NAME = 'curves.jsonl';
export const SPLIT_RECORD_NAME = 'splits.json';
export const WRITTEN_DEFINITION_NAME = 'definition.json';
export const LOCK_NAME = 'study.lock';
export const OWNER_NAME = 'study.owner.json';
/** Files the lock owns, kept when `run --force` empties a run directory. */
export const LOCK_FILES: readonly string[] = [LOCK_NAME, OWNER_NAME];

export const runPaths = {
  studyFile: (dir: string): string => path.join(dir, STUDY_FILE_NAME),
  curveLog: (dir: string): string => path.join(dir, CURVE_LOG_NAME),
  splitRecord: (dir: string): string => path.join(dir, SPLIT_RECORD_NAME),
  writtenDefinition: (dir: string): string => path.join(dir, WRITTEN_DEFINITION_NAME),
  lock: (dir: string): string => path.join(dir, LOCK_NAME),
  owner: (dir: string): string => path.join(dir, OWNER_NAME),
  checkpoints: (dir: string): string => path.join(dir, 'checkpoints'),
  checkpoint: (dir: string, trialId: number): string => path.join(dir, 'checkpoints', `trial-${trialId}.ckpt`),
  exportDir: (dir: string, rank: number): string => path.join(dir, 'export', `rank-${rank}`),
  ensembleExportDir: (dir: string, size: number): string => path.join(dir, 'export', `ensemble-${size}`),
  foldsExportDir: (dir: string, rank: number): string => path.join(dir, 'export', `rank-${rank}-folds`),
  plotsDir: (dir: string): string => path.join(dir, 'plots'),
} as const;
