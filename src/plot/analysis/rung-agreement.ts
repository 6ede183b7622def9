import type { StudyDocument } from '../../store/types.js';
import type { TrialRecord } from '../../core/trial.js';
import { rankTrials } from '../../core/ranking.js';
import { rungEndEpochs } from './jobs.js';

/**
 * Spearman's rank correlation of two rankings of the same items, as the Pearson correlation of the
 * ranks (equal to 1 - 6 sum d^2 / (n (n^2 - 1)) when there are no ties). NaN for fewer than two items
 * or when one ranking is constant.
 * Source: Spearman, "The proof and measurement of association between two things", 1904.
 */
export function spearman(ranksA: readonly number[], ranksB: readonly number[]): number {
  const n = ranksA.length;
  if (n !== ranksB.length) throw new RangeError('spearman needs two rankings of the same items');
  if (n < 2) return Number.NaN;
  const mean = (xs: readonly number[]): number => xs.reduce((s, x) => s + x, 0) / n;
  const ma = mean(ranksA);
  const mb = mean(ranksB);
  let sab = 0;
  let saa = 0;
  let sbb = 0;
  for (let i = 0; i < n; i++) {
    const da = ranksA[i]! - ma;
    const db = ranksB[i]! - mb;
    sab += da * db;
    saa += da * da;
    sbb += db * db;
  }
  return saa === 0 || sbb === 0 ? Number.NaN : sab / Math.sqrt(saa * sbb);
}

/** A trial as it stood at the end of one rung, for ranking within the rung. */
function atRung(trial: TrialRecord, rung: number, epochs: number): TrialRecord {
  return { ...trial, status: 'dropped', epochsTrained: epochs, score: trial.rungScores[rung] ?? null };
}

/** The one ranking of a bracket's trials by their scores at the end of one rung: trial id to 1-based place. */
export function rungPlaces(study: StudyDocument, bracket: number, rung: number): Map<number, number> {
  const epochs = rungEndEpochs(study).get(bracket)?.[rung] ?? 0;
  const trials = study.trials.filter((t) => t.bracket === bracket && t.rung >= rung).map((t) => atRung(t, rung, epochs));
  return new Map(rankTrials(trials, study.goal).map(({ rank, trial }) => [trial.id, rank]));
}

/** How the order at one rung agreed with the order at the next, among the configurations scored at both. */
export interface RungAgreement {
  bracket: number;
  fromRung: number;
  /** Configurations scored at both rungs (the promoted ones that did not diverge or fail). */
  configurations: number;
  /** Spearman's rho of their places at the two rungs; NaN with fewer than two. */
  rho: number;
}

/** Brackets of the study, in order, with their highest rung reached. */
function brackets(study: StudyDocument): [number, number][] {
  const top = new Map<number, number>();
  for (const t of study.trials) top.set(t.bracket, Math.max(top.get(t.bracket) ?? 0, t.rung));
  return [...top].sort((a, b) => a[0] - b[0]);
}

/** Agreement between every pair of consecutive rungs, per bracket. */
export function rungAgreements(study: StudyDocument): RungAgreement[] {
  return brackets(study).flatMap(([bracket, top]) => {
    const rows: RungAgreement[] = [];
    for (let rung = 0; rung < top; rung++) {
      const here = rungPlaces(study, bracket, rung);
      const next = rungPlaces(study, bracket, rung + 1);
      const both = [...next.keys()].filter((id) => here.has(id));
      // Places re-counted among these configurations only, so both rankings run 1..n.
      const relative = (places: Map<number, number>): number[] => {
        const order = [...both].sort((a, b) => places.get(a)! - places.get(b)!);
        return both.map((id) => order.indexOf(id) + 1);
      };
      rows.push({ bracket, fromRung: rung, configurations: both.length, rho: spearman(relative(here), relative(next)) });
    }
    return rows;
  });
}

/** Where one trial stood at each rung it reached: its place among the bracket's trials scored there. */
export interface RungStanding {
  trialId: number;
  bracket: number;
  rung: number;
  rungEpochs: number;
  place: number;
  of: number;
}

/** Every trial's place at every rung it reached, per bracket. */
export function rungStandings(study: StudyDocument): RungStanding[] {
  const ends = rungEndEpochs(study);
  return brackets(study).flatMap(([bracket, top]) => {
    const rows: RungStanding[] = [];
    for (let rung = 0; rung <= top; rung++) {
      const places = rungPlaces(study, bracket, rung);
      for (const [trialId, place] of places) rows.push({ trialId, bracket, rung, rungEpochs: ends.get(bracket)?.[rung] ?? 0, place, of: places.size });
    }
    return rows;
  });
}
