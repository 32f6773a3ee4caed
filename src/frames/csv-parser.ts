/**
 * CSV records from lines, after RFC 4180 ("Common Format and MIME Type for CSV Files", §2): fields are
 * separated by commas; a field may be enclosed in double quotes, and must be if it holds a comma, a
 * double quote or a line break; inside a quoted field a double quote is written twice. A record whose
 * quoted field spans lines is completed line by line, so a file is never held whole.
 *
 * Strict where the RFC is: a quote inside an unquoted field, or anything but a comma after a closing
 * quote, makes the record malformed.
 *
 * @example
 * const parser = new CsvParser();
 * parser.line('a,"b,c"'); // ['a', 'b,c']
 * parser.line('"multi');  // null: the quoted field goes on
 * parser.line('line"');   // ['multi\nline']
 */
export class CsvParser {
  private fields: string[] = [];
  /** Text of a quoted field that continues on the next line. */
  private pending = '';
  private continuing = false;

  /** Whether the last line ended inside a quoted field. */
  get open(): boolean {
    return this.continuing;
  }

  /**
   * Feed one line (without its line break). Returns the record's fields when it is complete, null when
   * a quoted field continues on the next line, or a string saying what is malformed.
   */
  line(text: string): string[] | string | null {
    let i = 0;
    if (this.continuing) {
      this.continuing = false;
      const done = this.quoted(text, 0, `${this.pending}\n`);
      if (done === null) return null;
      if (typeof done === 'string') return this.fail(done);
      i = done;
      if (i === text.length) return this.finish();
    }
    const n = text.length;
    for (;;) {
      if (text.charCodeAt(i) === 34) {
        const done = this.quoted(text, i + 1, '');
        if (done === null) return null;
        if (typeof done === 'string') return this.fail(done);
        i = done;
        if (i === n) return this.finish();
      } else {
        const comma = text.indexOf(',', i);
        const end = comma < 0 ? n : comma;
        const field = text.slice(i, end);
        if (field.includes('"')) {
          return this.fail(`a double quote inside unquoted field ${this.fields.length + 1}`);
        }
        this.fields.push(field);
        if (comma < 0) return this.finish();
        i = comma + 1;
        if (i === n) {
          this.fields.push('');
          return this.finish();
        }
      }
    }
  }

  /**
   * Read a quoted field from just after its opening quote (or from the start of a continuation line).
   * Returns the index just after the comma that ends it (or the line's end), null when the field goes on
   * to the next line, or what is malformed.
   */
  private quoted(text: string, from: number, prefix: string): number | string | null {
    let field = prefix;
    let i = from;
    for (;;) {
      const quote = text.indexOf('"', i);
      if (quote < 0) {
        this.pending = field + text.slice(i);
        this.continuing = true;
        return null;
      }
      field += text.slice(i, quote);
      if (text.charCodeAt(quote + 1) === 34) {
        field += '"';
        i = quote + 2;
        continue;
      }
      this.fields.push(field);
      const after = quote + 1;
      if (after === text.length) return after;
      if (text.charCodeAt(after) !== 44) {
        return `${JSON.stringify(text[after])} after the closing quote of field ${this.fields.length}`;
      }
      if (after + 1 === text.length) this.fields.push('');
      return after + 1;
    }
  }

  private finish(): string[] {
    const fields = this.fields;
    this.fields = [];
    return fields;
  }

  private fail(reason: string): string {
    this.fields = [];
    this.pending = '';
    this.continuing = false;
    return reason;
  }
}
