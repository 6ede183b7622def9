import { styleText } from 'node:util';

/** The few looks rungwise uses: a leader, a warning, an error prefix, a table header. */
export type Look = 'leader' | 'warning' | 'error' | 'header' | 'quiet';

const FORMATS: Record<Look, Parameters<typeof styleText>[0]> = {
  leader: ['bold', 'green'],
  warning: 'yellow',
  error: ['bold', 'red'],
  header: 'bold',
  quiet: 'dim',
};

/**
 * Whether text written to `stream` may carry colour: only a terminal, and never under `NO_COLOR`
 * (https://no-color.org: any non-empty value) or `TERM=dumb`. `FORCE_COLOR` and `NODE_DISABLE_COLORS`
 * are honoured through Node's own `hasColors()`.
 */
export function colourAllowed(stream: NodeJS.WritableStream, env: NodeJS.ProcessEnv = process.env): boolean {
  if ((env.NO_COLOR ?? '') !== '') return false;
  const tty = stream as Partial<NodeJS.WriteStream>;
  if (tty.isTTY !== true || typeof tty.hasColors !== 'function') return false;
  return tty.hasColors(env);
}

/** A painter for one stream: `paint('leader', text)` colours text where colour is allowed, else returns it as is. */
export type Painter = (look: Look, text: string) => string;

export function painterFor(stream: NodeJS.WritableStream, env: NodeJS.ProcessEnv = process.env): Painter {
  if (!colourAllowed(stream, env)) return (_look, text) => text;
  return (look, text) => styleText(FORMATS[look], text, { validateStream: false });
}

/** A painter that never colours (files, pipes, tests). */
export const plain: Painter = (_look, text) => text;
