/** A writable stream that keeps what is written, for tests of what a display prints. */
import { Writable } from 'node:stream';

export function sink(): { stream: Writable; text: () => string } {
  let text = '';
  const stream = new Writable({
    write(chunk: Buffer, _encoding, done) {
      text += chunk.toString();
      done();
    },
  });
  return { stream, text: () => text };
}
