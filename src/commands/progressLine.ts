/** A one-line progress display on a terminal; silent when the stream is not a terminal. */
export interface ProgressLine {
  readonly interactive: boolean;
  update(done: number): void;
  /** Prints a message on its own line (always, terminal or not). */
  note(message: string): void;
  done(): void;
}

export function progressLine(stream: NodeJS.WritableStream & { isTTY?: boolean }, label: string, total?: number): ProgressLine {
  const interactive = stream.isTTY === true;
  let last = 0;
  let shown = false;
  const draw = (done: number) => {
    const width = 24;
    const bar = total && Number.isFinite(total)
      ? `[${'#'.repeat(Math.min(width, Math.round((done / total) * width))).padEnd(width, '.')}] `
      : '';
    stream.write(`\r${label}: ${bar}${done}${total && Number.isFinite(total) ? ` of at most ${total}` : ''}`);
    shown = true;
  };
  return {
    interactive,
    update(done) {
      const now = Date.now();
      if (!interactive || now - last < 100) return;
      last = now;
      draw(done);
    },
    note(message) {
      if (shown) stream.write('\r\x1b[K');
      stream.write(`${message}\n`);
    },
    done() {
      if (shown) stream.write('\r\x1b[K');
      shown = false;
    },
  };
}
