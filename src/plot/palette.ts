/**
 * The report's colours, one meaning each. Hues come from the colour-blind-safe set of Okabe and Ito
 * ("Color Universal Design: how to make figures and presentations that are friendly to colorblind
 * people", 2008): orange #E69F00, sky blue #56B4E9, bluish green #009E73, yellow #F0E442, blue
 * #0072B2, vermillion #D55E00, reddish purple #CC79A7, black. Meanings:
 * - rungs: a lightness ramp from sky blue to a dark blue (rung 0 lightest); lightness order survives
 *   every kind of colour-vision deficiency, so rung order reads without hue;
 * - studies: vermillion, bluish green, reddish purple, orange (no blue: that is the rungs');
 * - the winner: ink with a star, never a colour alone; other trials: a light grey;
 * - the top five of the ranking, in the charts that follow single trials (learning curves, the
 *   hyperparameter rows, the rung paths): place 1 ink, places 2 to 5 vermillion, blue, bluish green
 *   and reddish purple, the four of the set with the most contrast on white. In those charts nothing
 *   else is coloured, so the rungs' blues and the studies' hues do not meet them.
 */

/** Ink for the winner, the leader line and text. */
export const INK = '#1d2126';
/** Everything that is context, not the point: the trials outside the top few. */
export const FADED = '#c3c8cf';
/** The shaded good region of a hyperparameter. */
export const GOOD_REGION = '#f3e6a6';
/** The planned end of the budget. */
export const BUDGET_END = '#6b7280';

const RUNG_RAMP = ['#9fd3f3', '#56b4e9', '#2a8fcf', '#0072b2', '#03517f', '#022f4d'] as const;

/** Colour of a rung index; rungs past the ramp share its darkest step. */
export function rungColour(rung: number): string {
  return RUNG_RAMP[Math.min(Math.max(rung, 0), RUNG_RAMP.length - 1)]!;
}

/** A Vega-Lite scale for rung indices 0..top. */
export function rungScale(top: number): { domain: number[]; range: string[] } {
  const domain = Array.from({ length: top + 1 }, (_, rung) => rung);
  return { domain, range: domain.map(rungColour) };
}

const STUDY_COLOURS = ['#d55e00', '#009e73', '#cc79a7', '#e69f00'] as const;

/** Colour of the study at a position in a comparison (the first is the one a single report uses). */
export function studyColour(index: number): string {
  return STUDY_COLOURS[index % STUDY_COLOURS.length]!;
}

/**
 * Colours of places 1 to 5 of the ranking: ink, then vermillion, blue, bluish green, reddish purple.
 * Source: Okabe and Ito, "Color Universal Design (CUD): how to make figures and presentations that
 * are friendly to colorblind people", 2008 (the eight-colour set).
 */
export const PLACE_COLOURS = [INK, '#d55e00', '#0072b2', '#009e73', '#cc79a7'] as const;

/** Colour of a place in the ranking (1-based); places past the fifth are context grey. */
export function placeColour(place: number): string {
  return PLACE_COLOURS[place - 1] ?? FADED;
}

/** The grey of what summarises many trials (the band of the learning curves). */
export const SUMMARY_BAND = '#dfe2e6';
/** Reference lines that are not trials: baselines and the planned budget. */
export const REFERENCE = '#6b7280';
/** The band of one standard error around the winner's score. */
export const NOISE_BAND = '#f3e6a6';

/** A five-pointed star, as an SVG path on the unit square vega scales symbols to: the winner's mark. */
export const WINNER_SHAPE =
  'M0,-1L0.2245,-0.309L0.9511,-0.309L0.3633,0.118L0.5878,0.809L0,0.382L-0.5878,0.809L-0.3633,0.118L-0.9511,-0.309L-0.2245,-0.309Z';

/** The winner's mark in any chart: an ink star with a white edge, so it reads over lines and points. */
export const WINNER_MARK = { type: 'point' as const, shape: WINNER_SHAPE, filled: true, color: INK, stroke: 'white', strokeWidth: 0.8, size: 170, opacity: 1 };

/** The winner's mark in text (tables, legends). */
export const WINNER_SYMBOL = '★';

/**
 * A table cell's shade for a share in [0, 1]: white to ink in lightness (so it reads without hue),
 * with white text on the darker half.
 */
export function shareShade(share: number): { background: string; text: string } {
  const clamped = Math.min(1, Math.max(0, share));
  const [r, g, b] = [0x1d, 0x21, 0x26].map((ink) => Math.round(255 - (255 - ink) * clamped * 0.85));
  const hex = (value: number): string => value.toString(16).padStart(2, '0');
  return { background: `#${hex(r!)}${hex(g!)}${hex(b!)}`, text: clamped > 0.5 ? '#ffffff' : INK };
}
