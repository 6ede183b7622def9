/** Every command of the command line, in the order `--help` lists them. */
import type { CommandDeclaration } from '../command.js';
import { compareCommand } from './compare.js';
import { demoCommand } from './demo.js';
import { exportCommand } from './export.js';
import { plotCommand } from './plot.js';
import { predictCommand } from './predict.js';
import { rankingCommand } from './ranking.js';
import { resumeCommand } from './resume.js';
import { runCommand } from './run.js';
import { workerCommand } from './worker.js';

export const COMMANDS: readonly CommandDeclaration[] = [
  runCommand,
  resumeCommand,
  workerCommand,
  rankingCommand,
  plotCommand,
  compareCommand,
  exportCommand,
  predictCommand,
  demoCommand,
];
