import cliProgress from 'cli-progress';
import type { StudyEvent, StudyObserver } from '../runner/events.js';
import type { Objective } from '../study/definition.js';
import { formatDuration, formatNumber } from './format.js';

export interface ProgressOptions {
  objective: Objective;
  /** Where to draw; a terminal gets a live bar, anything else one line per finished trial. */
  stream: NodeJS.WriteStream | NodeJS.WritableStream;
}

function describeTrial(event: Extract<StudyEvent, { type: 'trial-finished' }>, metric: string): string {
  const { trial, job } = event;
  const score = trial.objective === null ? '' : ` ${metric}=${formatNumber(trial.objective)}`;
  const what = trial.status === 'paused' ? `rung ${job.rung} done` : trial.status;
  const why = trial.divergence ? ` (${trial.divergence.reason})` : trial.error ? ` (${trial.error})` : '';
  const epoch = trial.divergence ? trial.divergence.epoch : trial.epochsTrained;
  const where = trial.jobs.at(-1)?.ranOn;
  return `trial ${trial.id} ${what} at epoch ${epoch}${score}${why}${where ? ` on ${where}` : ''}`;
}

/** A study observer that shows progress: trials done of planned, best objective so far, elapsed and remaining time. */
export function progressObserver(options: ProgressOptions): StudyObserver {
  const { objective, stream } = options;
  const isTerminal = 'isTTY' in stream && stream.isTTY === true;
  const started = Date.now();
  let planned = 0;
  let bar: cliProgress.SingleBar | undefined;

  return (event) => {
    switch (event.type) {
      case 'study-started':
        planned = event.plannedTrials;
        stream.write(`${event.resumed ? 'resuming' : 'running'} study ${event.name} on ${event.workers} worker(s); study file in ${event.dir}\n`);
        if (isTerminal) {
          bar = new cliProgress.SingleBar(
            {
              format: ' {bar} {value}/{total} trials | best {metric} {best} | elapsed {elapsedText} | left ~{leftText}',
              stream: stream as NodeJS.WriteStream,
              hideCursor: true,
              clearOnComplete: true,
            },
            cliProgress.Presets.shades_classic,
          );
          bar.start(planned, 0, { metric: objective.metric, best: '-', elapsedText: '00:00', leftText: '--:--' });
        }
        break;
      case 'trial-finished': {
        const elapsed = (Date.now() - started) / 1000;
        const done = event.finishedTrials;
        const left = done > 0 && planned > done ? (elapsed / done) * (planned - done) : 0;
        const best = formatNumber(event.best?.objective);
        if (bar) {
          bar.setTotal(Math.max(planned, done));
          bar.update(done, { best, elapsedText: formatDuration(elapsed), leftText: formatDuration(left) });
        } else {
          stream.write(`[${done}/${planned}] ${describeTrial(event, objective.metric)}; best ${best}\n`);
        }
        break;
      }
      case 'note':
        process.stderr.write(`note: ${event.message}\n`);
        break;
      case 'stopping':
        bar?.stop();
        bar = undefined;
        stream.write('stopping: no new trials start; waiting for running ones\n');
        break;
      case 'study-finished':
        bar?.stop();
        bar = undefined;
        break;
      default:
        break;
    }
  };
}
