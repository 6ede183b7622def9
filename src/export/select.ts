import { bestCheckpointWeights, decodeCheckpoint, type NamedWeights } from '../checkpoints/format.js';
import { FolderCheckpointStore } from '../checkpoints/folder-store.js';
import { decodeFoldBundle, isFoldBundle } from '../checkpoints/fold-bundle.js';
import { UserError } from '../core/errors.js';
import { rankTrials, type RankedTrial } from '../core/ranking.js';
import { frontOf } from '../core/front.js';
import { runPaths } from '../store/run-dir.js';
import type { StudyDocument } from '../store/types.js';

/** Ranks (1-based) of the ranked trials whose checkpoint is still in the run directory. */
export async function ranksWithCheckpoint(runDir: string, ranked: readonly RankedTrial[]): Promise<number[]> {
  const kept = new Set(await new FolderCheckpointStore(runDir).list());
  return ranked.filter(({ trial }) => kept.has(trial.id)).map(({ rank }) => rank);
}

function keptList(ranks: readonly number[]): string {
  return ranks.length === 0 ? 'no rank has a kept checkpoint' : `rank${ranks.length > 1 ? 's' : ''} ${ranks.join(', ')} ha${ranks.length > 1 ? 've' : 's'} a kept checkpoint`;
}

/**
 * The trial at `rank` of the study's ranking.
 * @throws UserError (E_EXPORT_RANK) when the ranking has no such rank (diverged, failed and unfinished trials are not ranked).
 */
export function trialAtRank(doc: StudyDocument, rank: number, studyFile: string): RankedTrial {
  if (!Number.isInteger(rank) || rank < 1) throw new UserError('E_EXPORT_RANK', `--rank must be a whole number from 1 up, got '${rank}'`);
  const ranked = rankTrials(doc.trials, doc.goal);
  const chosen = ranked[rank - 1];
  if (chosen === undefined) {
    const unranked = doc.trials.length - ranked.length;
    throw new UserError(
      'E_EXPORT_RANK',
      `${studyFile}: rank ${rank} does not exist; the study ranks ${ranked.length} trial${ranked.length === 1 ? '' : 's'}` +
        (unranked > 0 ? ` (${unranked} diverged, failed or unfinished trial${unranked === 1 ? ' is' : 's are'} not ranked)` : ''),
    );
  }
  return chosen;
}

/**
 * The network weights in a ranked trial's kept checkpoint, checked to be that trial's after its last recorded epoch
 * (with early stopping: its best epoch's weights, which the checkpoint also holds).
 * @throws UserError (E_EXPORT_NO_CHECKPOINT) naming the ranks that can be exported as they are and suggesting --retrain.
 */
export async function keptCheckpointWeights(runDir: string, doc: StudyDocument, chosen: RankedTrial): Promise<NamedWeights[]> {
  const { bytes, refuse } = await keptCheckpointBytes(runDir, doc, chosen);
  return checkedWeights(bytes, chosen, refuse);
}

/**
 * The k fold networks' weights in a k-fold trial's kept checkpoint (a fold bundle), in fold order,
 * each checked as {@link keptCheckpointWeights} checks a single network.
 * @throws UserError (E_EXPORT_NO_CHECKPOINT) when the trial has no kept checkpoint or it is not a bundle of `folds` fold checkpoints.
 */
export async function keptFoldWeights(runDir: string, doc: StudyDocument, chosen: RankedTrial, folds: number): Promise<NamedWeights[][]> {
  const { bytes, refuse } = await keptCheckpointBytes(runDir, doc, chosen);
  if (!isFoldBundle(bytes)) throw refuse(`holds one network, not the ${folds} fold networks of a k-fold trial`);
  let parts: Uint8Array[];
  try {
    parts = decodeFoldBundle(bytes, folds);
  } catch (error) {
    throw refuse(error instanceof Error ? error.message : String(error));
  }
  return parts.map((part) => checkedWeights(part, chosen, refuse));
}

type Refusal = (why: string) => UserError;

/** A ranked trial's kept checkpoint bytes, and how to refuse them. */
async function keptCheckpointBytes(runDir: string, doc: StudyDocument, chosen: RankedTrial): Promise<{ bytes: Uint8Array; refuse: Refusal }> {
  const file = runPaths.checkpoint(runDir, chosen.trial.id);
  const ranks = await ranksWithCheckpoint(runDir, rankTrials(doc.trials, doc.goal));
  const refuse = (why: string): UserError =>
    new UserError('E_EXPORT_NO_CHECKPOINT', `${file}: ${why}; ${keptList(ranks)}; \`rungwise export ${runDir} --rank ${chosen.rank} --retrain\` trains it afresh`);
  const bytes = await new FolderCheckpointStore(runDir).read(chosen.trial.id);
  if (!bytes) throw refuse(`rank ${chosen.rank} (trial ${chosen.trial.id}) has no kept checkpoint`);
  return { bytes, refuse };
}

/** The weights of one network's checkpoint, checked to be the trial's after its last epoch (its best epoch's with early stopping). */
function checkedWeights(bytes: Uint8Array, chosen: RankedTrial, refuse: Refusal): NamedWeights[] {
  const { manifest, network } = decodeCheckpoint(bytes);
  if (manifest.trialId !== chosen.trial.id || manifest.epoch !== chosen.trial.epochsTrained) {
    throw refuse(`holds trial ${manifest.trialId} at epoch ${manifest.epoch}, but rank ${chosen.rank} is trial ${chosen.trial.id} after epoch ${chosen.trial.epochsTrained}`);
  }
  if (chosen.trial.bestEpoch === undefined) return network;
  // Early stopping: the best epoch's weights, which the checkpoint carries beside the last epoch's.
  const best = bestCheckpointWeights(bytes);
  if (best.epoch !== chosen.trial.bestEpoch) throw refuse(`holds the weights of epoch ${best.epoch}, but trial ${chosen.trial.id}'s best epoch is ${chosen.trial.bestEpoch}`);
  return best.weights;
}

/** Which configuration of the front to export: its place on the front, or the largest network within a weight count. */
export interface FrontChoice {
  /** 1 = the smallest (or fastest) configuration of the study's front (`footprint.against`). */
  front?: number;
  /** The front of score against weights: the configuration with the most weights at most this many. */
  maxWeights?: number;
}

/**
 * The rank in the study's ranking of the front configuration chosen.
 * @throws UserError (E_EXPORT_FRONT) when the study has no second goal (for `front`), no weight counts
 * (for `maxWeights`), or no front configuration answers the choice, naming what the front holds.
 */
export function rankOnFront(doc: StudyDocument, choice: FrontChoice, studyFile: string): number {
  const ranking = rankTrials(doc.trials, doc.goal);
  const against = choice.front !== undefined ? doc.definition.footprint?.against : 'weights';
  if (against === undefined) throw new UserError('E_EXPORT_FRONT', `${studyFile}: --front needs a study with a second goal (footprint.against: weights or time); use --rank, or --max-weights for the front of score against weights`);
  const front = frontOf(ranking, doc.goal, against);
  if (front.length === 0) throw new UserError('E_EXPORT_FRONT', `${studyFile}: the study's front of ${doc.goal.metric} against ${against} is empty (no finished, unflagged trial with a recorded ${against === 'weights' ? 'weight count' : 'time per row'})`);
  const places = `the front holds ${front.length} configuration${front.length === 1 ? '' : 's'}, ${against} ${front.map((m) => formatValue(m.value)).join(', ')}`;
  if (choice.front !== undefined) {
    const member = front[choice.front - 1];
    if (member === undefined) throw new UserError('E_EXPORT_FRONT', `${studyFile}: --front ${choice.front} does not exist; ${places} (places 1 to ${front.length})`);
    return member.ranked.rank;
  }
  const within = front.filter((m) => m.value <= choice.maxWeights!);
  const member = within.at(-1);
  if (member === undefined) throw new UserError('E_EXPORT_FRONT', `${studyFile}: --max-weights ${choice.maxWeights}: no front configuration is that small; ${places}`);
  return member.ranked.rank;
}

function formatValue(value: number): string {
  return Number.isInteger(value) ? String(value) : value.toPrecision(3);
}
