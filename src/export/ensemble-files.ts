/**
 * The native form of an exported ensemble: one folder per member (`trial-<id>/model.json` and
 * `weights.bin`, or `trial-<id>-fold-<i>/` for a fold network, each written by the single-network
 * writer) and `configuration.json`, whose `ensemble.members` names each member's folder and weight
 * (and a fold network's own recipe). `predict` averages the members' outputs with those weights.
 */
import type * as tf from '@tensorflow/tfjs';
import { existsSync } from 'node:fs';
import { mkdir } from 'node:fs/promises';
import path from 'node:path';
import { UserError } from '../core/errors.js';
import type { PreprocessingRecipe } from '../data/types.js';
import type { ExportConfiguration } from './configuration.js';
import { MODEL_FILE, loadLayersModelFromDir, saveLayersModel } from './model-files.js';

/** One network of a loaded model and its weight in the average (1 for a single network). */
export interface WeightedNetwork {
  network: tf.LayersModel;
  weight: number;
  /** A fold network's own recipe, which encodes its inputs (absent: the export's recipe). */
  recipe?: PreprocessingRecipe;
}

/** A member's folder inside the export folder: `trial-<id>`, or `trial-<id>-fold-<fold>` for a fold network (fold 1-based). */
export function memberFolder(trialId: number, fold?: number): string {
  return fold === undefined ? `trial-${trialId}` : `trial-${trialId}-fold-${fold}`;
}

/** Writes a member's tfjs Layers model into its folder (named by {@link memberFolder}) under `dir`. */
export async function saveMember(network: tf.LayersModel, dir: string, folder: string): Promise<void> {
  const into = path.join(dir, folder);
  await mkdir(into);
  await saveLayersModel(network, into);
}

/**
 * Loads every member an ensemble export's configuration names, with its weight.
 * @throws UserError naming the member folder that lacks its model.
 */
export async function loadEnsembleMembers(dir: string, configuration: ExportConfiguration): Promise<WeightedNetwork[]> {
  const members = configuration.ensemble?.members ?? [];
  const loaded: WeightedNetwork[] = [];
  try {
    for (const member of members) {
      const folder = path.join(dir, member.folder);
      if (!existsSync(path.join(folder, MODEL_FILE))) throw new UserError('E_MODEL', `${path.join(folder, MODEL_FILE)}: not found; export the ensemble again with \`rungwise export --ensemble\``);
      loaded.push({ network: await loadLayersModelFromDir(folder), weight: member.weight, ...(member.recipe ? { recipe: member.recipe } : {}) });
    }
  } catch (error) {
    for (const member of loaded) member.network.dispose();
    throw error;
  }
  return loaded;
}
