/**
 * Saving behind the dispatch loop: outcomes settled while a save is under way are ranked, pruned and
 * saved together, then announced. A trial shown as finished is on disk, and so is every checkpoint
 * the study file counts on.
 */
import { frontOf } from '../core/front.js';
import type { Sampler } from '../samplers/sampler.js';
import { rankTrials, type RankedTrial } from '../core/ranking.js';
import { isActive } from '../core/trial-status.js';
import type { StudyStore } from '../store/study-store.js';
import { KEPT_CHECKPOINTS, type CheckpointKeeper } from './checkpoint-keeper.js';

export class BatchedPersistence<Item> {
  private readonly unsaved: Item[] = [];
  private running: Promise<void> | undefined;
  private failure: unknown;
  /** Trials that have (or may have) a checkpoint; pruned ones leave the set. */
  private readonly withCheckpoint: Set<number>;

  constructor(
    private readonly store: StudyStore,
    private readonly keeper: CheckpointKeeper,
    private readonly sampler: Sampler,
    /** Called after each save with the items saved and the ranking at that moment. */
    private readonly announce: (items: Item[], ranking: RankedTrial[]) => void,
    withCheckpoint: Iterable<number>,
    /** How many of the best trials keep their checkpoint when the study ends (the study's `keptNetworks`). */
    private readonly keptNetworks: number = KEPT_CHECKPOINTS,
  ) {
    this.withCheckpoint = new Set(withCheckpoint);
  }

  /** The first save or prune that failed, if any: the study must stop. */
  get error(): unknown {
    return this.failure;
  }

  /** Note that the trial has a checkpoint now. */
  checkpointed(trialId: number): void {
    this.withCheckpoint.add(trialId);
  }

  /** Queue an outcome; the save starts on a later turn, after the loop has dispatched the next job. */
  queue(item: Item): void {
    this.unsaved.push(item);
    if (!this.running) this.drain();
  }

  /** Wait until everything queued so far is saved; rethrows a failed save. */
  async flush(): Promise<void> {
    while (this.running) await this.running;
    if (this.failure) throw this.failure;
  }

  /** Save now (outside the batches) and prune with the final ranking. */
  async saveNow(): Promise<void> {
    await this.flush();
    await this.prune(rankTrials(this.store.doc.trials, this.store.doc.goal));
    await this.keeper.settled();
    await this.store.save();
  }

  private drain(): void {
    this.running = (async () => {
      await new Promise<void>((resolve) => setImmediate(resolve));
      while (this.unsaved.length > 0 && !this.failure) {
        const batch = this.unsaved.splice(0);
        const ranking = rankTrials(this.store.doc.trials, this.store.doc.goal);
        await this.prune(ranking);
        await this.keeper.settled();
        await this.store.save();
        this.announce(batch, ranking);
      }
    })()
      .catch((error: unknown) => {
        this.failure ??= error;
      })
      .finally(() => {
        this.running = undefined;
        if (this.unsaved.length > 0 && !this.failure) this.drain();
      });
  }

  /**
   * Keep a checkpoint while its trial may still be continued, and while it ranks among the best
   * `keptNetworks` (default KEPT_CHECKPOINTS) plus one place for every trial still active: an active trial can leave the
   * ranking (a later job diverges or fails) and lift the ones below it, but nothing else can. So a
   * checkpoint is never deleted while it may still be needed, in whatever order jobs finish; when the
   * study ends, no trial is active and exactly the best `keptNetworks` keep theirs. With a second
   * goal, the front's configurations keep theirs too (for `export --front`): the front holds finished
   * trials only, whose records never change, so a trial that leaves it never comes back.
   */
  private async prune(ranking: readonly RankedTrial[]): Promise<void> {
    const trials = this.store.doc.trials;
    const active = trials.filter((t) => isActive(t.status));
    const kept = new Set(ranking.slice(0, this.keptNetworks + active.length).map((r) => r.trial.id));
    // A test double of the store may hold no definition.
    const against = this.store.doc.definition?.footprint?.against;
    if (against !== undefined) for (const member of frontOf(ranking, this.store.doc.goal, against)) kept.add(member.ranked.trial.id);
    const statusOf = new Map(trials.map((t) => [t.id, t.status]));
    for (const id of [...this.withCheckpoint]) {
      const status = statusOf.get(id);
      if ((status !== undefined && isActive(status)) || kept.has(id) || this.sampler.mayContinue(id)) continue;
      this.keeper.remove(id);
      this.withCheckpoint.delete(id);
    }
  }
}
