import { existsSync } from 'node:fs';
import path from 'node:path';
import { UserError } from '../errors.js';
import { checkpointDir } from '../runner/checkpoints.js';
import { rankTrials, type RankedTrial } from '../store/ranking.js';
import type { StudyDocument } from '../store/types.js';
import { readCheckpoint, type NamedWeights } from '../train/checkpoint.js';

const CHECKPOINT_MANIFEST = 'checkpoint.json';

/** Ranks (1-based) of the ranked trials whose checkpoint is still on disk. */
export function ranksWithCheckpoint(runDir: string, ranked: readonly RankedTrial[]): number[] {
  return ranked.filter(({ trial }) => existsSync(path.join(checkpointDir(runDir, trial.id), CHECKPOINT_MANIFEST))).map(({ rank }) => rank);
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
  const ranked = rankTrials(doc.trials, doc.objective);
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
 * The network weights in a ranked trial's kept checkpoint, checked to be that trial's after its last recorded epoch.
 * @throws UserError (E_EXPORT_NO_CHECKPOINT) naming the ranks that can be exported as they are and suggesting --retrain.
 */
export async function keptCheckpointWeights(runDir: string, doc: StudyDocument, chosen: RankedTrial): Promise<NamedWeights[]> {
  const dir = checkpointDir(runDir, chosen.trial.id);
  const ranks = ranksWithCheckpoint(runDir, rankTrials(doc.trials, doc.objective));
  const refuse = (why: string): UserError =>
    new UserError('E_EXPORT_NO_CHECKPOINT', `${dir}: ${why}; ${keptList(ranks)}; \`rungwise export ${runDir} --rank ${chosen.rank} --retrain\` trains it afresh`);
  if (!existsSync(path.join(dir, CHECKPOINT_MANIFEST))) throw refuse(`rank ${chosen.rank} (trial ${chosen.trial.id}) has no kept checkpoint`);
  const { manifest, network } = await readCheckpoint(dir);
  if (manifest.trialId !== chosen.trial.id || manifest.epoch !== chosen.trial.epochsTrained) {
    throw refuse(`holds trial ${manifest.trialId} at epoch ${manifest.epoch}, but rank ${chosen.rank} is trial ${chosen.trial.id} after epoch ${chosen.trial.epochsTrained}`);
  }
  return network;
}
