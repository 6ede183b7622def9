import { bestCheckpointWeights, decodeCheckpoint, type NamedWeights } from '../checkpoints/format.js';
import { FolderCheckpointStore } from '../checkpoints/folder-store.js';
import { UserError } from '../core/errors.js';
import { rankTrials, type RankedTrial } from '../core/ranking.js';
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
  const file = runPaths.checkpoint(runDir, chosen.trial.id);
  const ranks = await ranksWithCheckpoint(runDir, rankTrials(doc.trials, doc.goal));
  const refuse = (why: string): UserError =>
    new UserError('E_EXPORT_NO_CHECKPOINT', `${file}: ${why}; ${keptList(ranks)}; \`rungwise export ${runDir} --rank ${chosen.rank} --retrain\` trains it afresh`);
  const bytes = await new FolderCheckpointStore(runDir).read(chosen.trial.id);
  if (!bytes) throw refuse(`rank ${chosen.rank} (trial ${chosen.trial.id}) has no kept checkpoint`);
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
