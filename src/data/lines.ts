const NEWLINE = 0x0a;
const RETURN = 0x0d;

function countNewlines(chunk: Uint8Array, from: number, to: number): number {
  let count = 0;
  const buffer = Buffer.from(chunk.buffer, chunk.byteOffset, chunk.byteLength);
  for (let i = buffer.indexOf(NEWLINE, from); i >= 0 && i < to; i = buffer.indexOf(NEWLINE, i + 1)) count++;
  return count;
}

/**
 * Line numbers of a CSV read in chunks. csv-parse gives the byte offset where each record ends;
 * counting '\n' bytes ourselves gives the true starting line even when quoted fields hold line
 * breaks, and skips the blank lines csv-parse skips. Only the chunks of records not yet seen are kept.
 */
export class LineCounter {
  private chunks: Uint8Array[] = [];
  /** Stream offset of chunks[0]. */
  private chunksStart = 0;
  private appendedBytes = 0;
  private appendedNewlines = 0;
  /** Offset where the last record seen ended, and the '\n' bytes before it. */
  private consumed = 0;
  private consumedNewlines = 0;

  append(chunk: Uint8Array): void {
    this.chunks.push(chunk);
    this.appendedBytes += chunk.length;
    this.appendedNewlines += countNewlines(chunk, 0, chunk.length);
  }

  /** 1-based line of byte `index` of a chunk about to be appended. */
  lineAt(chunk: Uint8Array, index: number): number {
    return this.appendedNewlines + countNewlines(chunk, 0, index) + 1;
  }

  /** Number of lines appended so far (the last one possibly without its '\n'). */
  totalLines(): number {
    return this.appendedNewlines + 1;
  }

  /** 1-based line of the first line of a chunk about to be appended that is not valid UTF-8. */
  firstInvalidUtf8Line(chunk: Uint8Array): number {
    const decoder = new TextDecoder('utf-8', { fatal: true });
    let start = 0;
    let line = this.appendedNewlines + 1;
    for (let i = 0; i <= chunk.length; i++) {
      if (i === chunk.length || chunk[i] === NEWLINE) {
        try {
          decoder.decode(chunk.subarray(start, i));
        } catch {
          return line;
        }
        line++;
        start = i + 1;
      }
    }
    return line;
  }

  private byteAt(offset: number): number | undefined {
    let base = this.chunksStart;
    for (const chunk of this.chunks) {
      if (offset < base + chunk.length) return chunk[offset - base];
      base += chunk.length;
    }
    return undefined;
  }

  /** Skips the blank lines after the last record: the offset where the next record starts and the '\n' bytes before it. */
  private nextStart(): { position: number; newlines: number } {
    let position = this.consumed;
    let newlines = this.consumedNewlines;
    for (let byte = this.byteAt(position); byte === NEWLINE || byte === RETURN; byte = this.byteAt(++position)) {
      if (byte === NEWLINE) newlines++;
    }
    return { position, newlines };
  }

  /** The line on which the record ending at stream offset `end` starts; moves past it. */
  recordStart(end: number): number {
    const { position, newlines } = this.nextStart();
    let counted = newlines;
    let base = this.chunksStart;
    for (const chunk of this.chunks) {
      const from = Math.max(position - base, 0);
      const to = Math.min(end - base, chunk.length);
      if (to > from) counted += countNewlines(chunk, from, to);
      base += chunk.length;
    }
    this.consumed = end;
    this.consumedNewlines = counted;
    while (this.chunks.length > 1 && this.chunksStart + this.chunks[0]!.length <= end) this.chunksStart += this.chunks.shift()!.length;
    return newlines + 1;
  }

  /** The line on which the record being read (not yet complete) starts. */
  pendingRecordLine(): number {
    const { position, newlines } = this.nextStart();
    return position >= this.appendedBytes ? this.appendedNewlines + 1 : newlines + 1;
  }
}
