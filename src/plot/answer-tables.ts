/**
 * The answers that read faster as numbers than as marks: how the compute split over the rungs of
 * each bracket, and how well each rung foretold the next, in words. HTML tables under the charts of
 * their question; halving samplers only.
 */
import type { StudyDocument } from '../store/types.js';
import { rungShares } from './analysis/budget.js';
import { rungAgreements, rungStandings } from './analysis/rung-agreement.js';
import { agreementText } from './charts/rung-agreement.js';
import { escapeHtml } from './html.js';
import { isHalving } from './labels.js';
import { rungColour, studyColour } from './palette.js';
import type { StudyImportance } from './analysis/study-importance.js';
import { bestTrial } from './winner.js';

const percent = (share: number): string => `${Math.round(share * 100)}%`;
const epochsText = (epochs: number | undefined): string => (epochs === undefined ? '? epochs' : `${epochs} epoch${epochs === 1 ? '' : 's'}`);

function table(className: string, header: readonly string[], rows: readonly string[][]): string {
  const head = `<tr>${header.map((h) => `<th scope="col">${escapeHtml(h)}</th>`).join('')}</tr>`;
  const body = rows.map((cells) => `<tr>${cells.map((cell, i) => (i === 0 ? `<th scope="row">${cell}</th>` : `<td>${cell}</td>`)).join('')}</tr>`).join('\n');
  return `<div class="scroll"><table class="${className}">\n${head}\n${body}\n</table></div>`;
}

/**
 * One row per bracket, one column per rung: the share of all epochs trained there, with how many
 * configurations trained to how many epochs. '' unless the sampler is a halving one.
 */
export function rungShareTable(study: StudyDocument): string {
  if (!isHalving(study.definition.sampler.kind)) return '';
  const shares = rungShares(study);
  if (shares.length === 0) return '';
  const rungs = [...new Set(shares.map((s) => s.rung))].sort((a, b) => a - b);
  const brackets = [...new Set(shares.map((s) => s.bracket))].sort((a, b) => a - b);
  const rows = brackets.map((bracket) => [
    `bracket ${bracket}`,
    ...rungs.map((rung) => {
      const share = shares.find((s) => s.bracket === bracket && s.rung === rung);
      if (!share) return '';
      const swatch = `<span class="swatch" style="background:${rungColour(rung)}"></span>`;
      return `${swatch}<b>${percent(share.share)}</b> <span class="quiet">${share.configurations} to ${epochsText(share.rungEpochs)}</span>`;
    }),
  ]);
  return `<p>The share of all epochs trained that each rung took, bracket by bracket (rung 0 is the first, cheapest look at a configuration):</p>\n${table('rung-shares', ['', ...rungs.map((r) => `rung ${r}`)], rows)}`;
}

/**
 * One row per pair of consecutive rungs: the epochs of each, how many configurations went on, the
 * agreement in numbers and words, and the winner's place at the earlier rung when it was there.
 * '' unless the sampler is a halving one with a configuration past rung 0.
 */
export function rungAgreementTable(study: StudyDocument): string {
  if (!isHalving(study.definition.sampler.kind)) return '';
  const agreements = rungAgreements(study);
  if (agreements.length === 0) return '';
  const standings = rungStandings(study);
  const epochs = new Map(standings.map((s) => [`${s.bracket}/${s.rung}`, s.rungEpochs]));
  const winner = bestTrial(study)?.id;
  const rows = agreements.map((a) => {
    const standing = standings.find((s) => s.trialId === winner && s.bracket === a.bracket && s.rung === a.fromRung);
    return [
      `bracket ${a.bracket}`,
      escapeHtml(`rung ${a.fromRung} (${epochsText(epochs.get(`${a.bracket}/${a.fromRung}`))}) to rung ${a.fromRung + 1} (${epochsText(epochs.get(`${a.bracket}/${a.fromRung + 1}`))})`),
      escapeHtml(agreementText(a.rho, a.configurations)),
      standing ? escapeHtml(`${standing.place} of ${standing.of}`) : '',
    ];
  });
  return `<p>How well each short look foretold the longer one, among the configurations that went on (1: the same order, 0: no relation):</p>\n${table('rung-agreement', ['', 'from the shorter look to the longer', 'agreement', "winner's place at the shorter look"], rows)}`;
}

/** Extra styles the tables use. */
export const ANSWER_TABLE_STYLE = `
.swatch { display: inline-block; width: 10px; height: 10px; margin-right: 5px; border: 1px solid #9aa1a9; }
.quiet { color: #5b636b; }
table.rung-shares td, table.rung-agreement td, table.importance td { padding-right: 18px; }
.share-bar { display: inline-block; height: 9px; margin-right: 6px; vertical-align: middle; }
`;

/**
 * Studies side by side: one row per hyperparameter (largest share in any study first), one column
 * per study, each cell the share of the score's variance it explains alone, as a number and a bar
 * in the study's colour. '' when no study has an importance.
 */
export function importanceTable(names: readonly string[], importances: readonly (StudyImportance | undefined)[]): string {
  const shares = new Map<string, (number | undefined)[]>();
  importances.forEach((importance, i) => {
    for (const p of importance?.parameters ?? []) {
      const row = shares.get(p.shortTitle) ?? names.map(() => undefined);
      row[i] = p.share;
      shares.set(p.shortTitle, row);
    }
  });
  if (shares.size === 0) return '';
  const largest = (row: (number | undefined)[]): number => Math.max(...row.map((v) => v ?? 0));
  const rows = [...shares]
    .sort((a, b) => largest(b[1]) - largest(a[1]))
    .map(([parameter, row]) => [
      escapeHtml(parameter),
      ...row.map((share, i) =>
        share === undefined ? '<span class="quiet">-</span>' : `<span class="share-bar" style="width:${Math.round(share * 80)}px;background:${studyColour(i)}"></span>${percent(share)}`,
      ),
    ]);
  const epochs = importances.map((imp, i) => (imp ? `${escapeHtml(names[i]!)} at epoch ${imp.epoch}` : `${escapeHtml(names[i]!)}: too few configurations`));
  return `<p>The share of the score's variance each hyperparameter explains alone (functional ANOVA of a random forest, Hutter, Hoos and Leyton-Brown, 2014; ${epochs.join('; ')}):</p>\n${table('importance', ['', ...names.map(escapeHtml)], rows)}`;
}
