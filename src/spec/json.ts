// A strict JSON reader for spec files (RFC 8259, no comments, no trailing commas) that knows where
// it is: errors carry the offset of the offending character, a key given twice in one object is
// an error (JSON.parse keeps the last one silently; TOML refuses it), and nothing of the text is
// echoed back, so an error is one short line however large or strange the input.

export type JsonPathStep = string | number;

export class JsonReadError extends Error {
  constructor(
    /** Character offset of the problem in the text. */
    readonly offset: number,
    /** What is wrong, without position or path. */
    readonly problem: string,
    /** For a key given twice: its path, and the offset of its first appearance. */
    readonly duplicate: { path: JsonPathStep[]; firstOffset: number } | null = null,
  ) {
    super(problem);
  }
}

/** Line and column (both from 1, columns in UTF-16 code units) of an offset in a text. */
export function lineAndColumn(text: string, offset: number): { line: number; column: number } {
  let line = 1;
  let lineStart = 0;
  for (let i = text.indexOf('\n'); i !== -1 && i < offset; i = text.indexOf('\n', i + 1)) {
    line++;
    lineStart = i + 1;
  }
  return { line, column: offset - lineStart + 1 };
}

// Deeper than any spec needs; far below what would exhaust the call stack.
const MAX_DEPTH = 512;

const NUMBER = /-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?/y;
const ESCAPES: Record<string, string> = { '"': '"', '\\': '\\', '/': '/', b: '\b', f: '\f', n: '\n', r: '\r', t: '\t' };

/** Parses JSON text as JSON.parse would, but refusing duplicate keys; throws JsonReadError. */
export function parseJsonStrict(text: string): unknown {
  const reader = new Reader(text);
  // A byte order mark is not JSON, but editors write one; RFC 8259 lets a reader skip it.
  if (text.charCodeAt(0) === 0xfeff) reader.at = 1;
  reader.skipSpace();
  const value = reader.value(0);
  reader.skipSpace();
  if (reader.at < text.length) reader.fail(`${reader.here()} after the end of the document`);
  return value;
}

class Reader {
  at = 0;
  private readonly path: JsonPathStep[] = [];

  constructor(private readonly text: string) {}

  fail(problem: string, offset = this.at): never {
    throw new JsonReadError(offset, problem);
  }

  /** The character at the reading position, as an error message names it. */
  here(): string {
    if (this.at >= this.text.length) return 'end of text';
    const code = this.text.codePointAt(this.at) as number;
    if (code < 0x20 || code === 0x7f || (code >= 0x80 && code < 0xa0))
      return `control character U+${code.toString(16).toUpperCase().padStart(4, '0')}`;
    return `"${String.fromCodePoint(code)}"`;
  }

  skipSpace(): void {
    const text = this.text;
    let i = this.at;
    for (; i < text.length; i++) {
      const c = text.charCodeAt(i);
      if (c !== 0x20 && c !== 0x0a && c !== 0x0d && c !== 0x09) break;
    }
    this.at = i;
  }

  value(depth: number): unknown {
    if (depth > MAX_DEPTH) this.fail(`nested deeper than ${MAX_DEPTH} levels`);
    const c = this.text[this.at];
    if (c === '{') return this.object(depth);
    if (c === '[') return this.array(depth);
    if (c === '"') return this.string();
    if (c === '-' || (c >= '0' && c <= '9')) return this.number();
    for (const [word, value] of [
      ['true', true],
      ['false', false],
      ['null', null],
    ] as const) {
      if (this.text.startsWith(word, this.at)) {
        this.at += word.length;
        return value;
      }
    }
    return this.fail(`unexpected ${this.here()}, expected a value`);
  }

  private object(depth: number): Record<string, unknown> {
    const result: Record<string, unknown> = {};
    const firstSeen = new Map<string, number>();
    this.at++;
    this.skipSpace();
    if (this.text[this.at] === '}') {
      this.at++;
      return result;
    }
    for (;;) {
      if (this.text[this.at] !== '"') this.fail(`unexpected ${this.here()}, expected a key in double quotes`);
      const keyOffset = this.at;
      const key = this.string();
      const first = firstSeen.get(key);
      if (first !== undefined)
        throw new JsonReadError(keyOffset, 'duplicate key', { path: [...this.path, key], firstOffset: first });
      firstSeen.set(key, keyOffset);
      this.skipSpace();
      if (this.text[this.at] !== ':') this.fail(`unexpected ${this.here()}, expected ":" after a key`);
      this.at++;
      this.skipSpace();
      this.path.push(key);
      // defineProperty: a key named __proto__ stays a plain key, as with JSON.parse.
      Object.defineProperty(result, key, {
        value: this.value(depth + 1),
        writable: true,
        enumerable: true,
        configurable: true,
      });
      this.path.pop();
      this.skipSpace();
      const next = this.text[this.at];
      if (next === '}') {
        this.at++;
        return result;
      }
      if (next !== ',') this.fail(`unexpected ${this.here()}, expected "," or "}" after a value in an object`);
      this.at++;
      this.skipSpace();
    }
  }

  private array(depth: number): unknown[] {
    const result: unknown[] = [];
    this.at++;
    this.skipSpace();
    if (this.text[this.at] === ']') {
      this.at++;
      return result;
    }
    for (;;) {
      this.path.push(result.length);
      result.push(this.value(depth + 1));
      this.path.pop();
      this.skipSpace();
      const next = this.text[this.at];
      if (next === ']') {
        this.at++;
        return result;
      }
      if (next !== ',') this.fail(`unexpected ${this.here()}, expected "," or "]" after a value in a list`);
      this.at++;
      this.skipSpace();
    }
  }

  private string(): string {
    const text = this.text;
    const opening = this.at;
    let i = this.at + 1;
    let out = '';
    let runStart = i;
    for (;;) {
      if (i >= text.length) this.fail('unterminated string (no closing ")', opening);
      const c = text.charCodeAt(i);
      if (c === 0x22) {
        this.at = i + 1;
        return out + text.slice(runStart, i);
      }
      if (c < 0x20) {
        this.at = i;
        this.fail(`${this.here()} inside a string (write it as an escape such as \\n)`);
      }
      if (c !== 0x5c) {
        i++;
        continue;
      }
      out += text.slice(runStart, i);
      const escape = text[i + 1];
      if (escape === 'u') {
        const hex = text.slice(i + 2, i + 6);
        if (!/^[0-9a-fA-F]{4}$/.test(hex)) this.fail('invalid \\u escape: expected 4 hexadecimal digits', i);
        out += String.fromCharCode(parseInt(hex, 16));
        i += 6;
      } else if (escape !== undefined && Object.hasOwn(ESCAPES, escape)) {
        out += ESCAPES[escape];
        i += 2;
      } else {
        this.at = i + 1;
        this.fail(`invalid escape: backslash followed by ${this.here()}`, i);
      }
      runStart = i;
    }
  }

  private number(): number {
    NUMBER.lastIndex = this.at;
    const match = NUMBER.exec(this.text);
    if (!match) this.fail(`unexpected ${this.here()}, expected a digit`);
    this.at += match[0].length;
    return Number(match[0]);
  }
}
