/**
 * Incremental line splitting for streamed text: feed decoded chunks in order, receive whole lines
 * with their 1-based physical line numbers. Memory stays bounded by `maxLength`: a line longer
 * than that is not accumulated; only its first `maxLength` characters are kept (for the reject
 * record) and its full length is counted.
 */

/** Called once per physical line. `fullLength` exceeds `line.length` only when the line was clipped. */
export type LineSink = (line: string, lineNo: number, fullLength: number) => void;

/** Splits streamed text into physical lines (LF or CRLF), numbered from 1, clipping over-long ones. */
export class LineSplitter {
  private carry = '';
  private lineNo = 0;
  private first = true;
  /** While inside an over-long line: its clipped head and the characters seen so far. */
  private skipping = false;
  private clipped = '';
  private skippedLength = 0;

  constructor(private readonly maxLength: number) {}

  /** Number of lines emitted so far. */
  get lines(): number {
    return this.lineNo;
  }

  /** Splits a chunk into lines, handing each complete one to `sink`; a partial last line waits for the next chunk. */
  feed(text: string, sink: LineSink): void {
    if (this.first && text.length > 0) {
      this.first = false;
      // A UTF-8 byte order mark is an encoding artefact, not part of the first field.
      if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
    }
    let start = 0;
    if (this.skipping) {
      const newline = text.indexOf('\n');
      if (newline < 0) {
        this.skippedLength += text.length;
        return;
      }
      this.skippedLength += newline;
      this.emit(this.clipped, this.skippedLength, sink);
      this.skipping = false;
      this.clipped = '';
      start = newline + 1;
    }
    let newline = text.indexOf('\n', start);
    if (newline >= 0 && this.carry.length > 0) {
      const line = this.carry + text.slice(start, newline);
      this.carry = '';
      this.emit(line, line.length, sink);
      start = newline + 1;
      newline = text.indexOf('\n', start);
    }
    while (newline >= 0) {
      const line = text.slice(start, newline);
      this.emit(line, line.length, sink);
      start = newline + 1;
      newline = text.indexOf('\n', start);
    }
    if (start < text.length) {
      this.carry = this.carry.length > 0 ? this.carry + text.slice(start) : text.slice(start);
      // +1 leaves room for the '\r' of a CRLF line of exactly maxLength characters.
      if (this.carry.length > this.maxLength + 1) {
        this.skipping = true;
        this.clipped = this.carry.slice(0, this.maxLength);
        this.skippedLength = this.carry.length;
        this.carry = '';
      }
    }
  }

  /** Flush the last line when the text does not end with a newline. */
  end(sink: LineSink): void {
    if (this.skipping) {
      this.emit(this.clipped, this.skippedLength, sink);
      this.skipping = false;
      this.clipped = '';
    } else if (this.carry.length > 0) {
      const line = this.carry;
      this.carry = '';
      this.emit(line, line.length, sink);
    }
  }

  private emit(line: string, fullLength: number, sink: LineSink): void {
    this.lineNo++;
    // CRLF files: the '\r' belongs to the line ending, not to the last field.
    if (line.length > 0 && line.charCodeAt(line.length - 1) === 13) {
      if (fullLength === line.length) fullLength--;
      line = line.slice(0, -1);
    }
    sink(line, this.lineNo, fullLength);
  }
}

/** A blank line is empty or only whitespace; blank lines are skipped, not rejected. */
export function isBlank(line: string): boolean {
  if (line.length === 0) return true;
  // Fast path: most lines start with a visible character.
  if (line.charCodeAt(0) > 32 && line.charCodeAt(0) !== 0xa0 && line.charCodeAt(0) !== 0xfeff) return false;
  return line.trim().length === 0;
}

/** Clip text to a maximum length (for raw copies of rejected lines). */
export function clipText(text: string, max: number): string {
  return text.length > max ? text.slice(0, max) : text;
}
