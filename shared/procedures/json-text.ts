// A strict JSON reader (RFC 8259) for files a person writes by hand. JSON.parse is not enough
// here: its error text differs between engines and does not always give a line and column, and it
// silently keeps the last of two members with the same name (RFC 8259 §4 leaves that to the
// reader), which would hide a typing error in a procedure.

export type JsonValue = null | boolean | number | string | JsonValue[] | { [key: string]: JsonValue };

export interface JsonDuplicate {
  /** Path of the repeated member, in the form steps[3].limits.thdDb. */
  path: string;
  name: string;
}

export type JsonRead =
  | { ok: true; value: JsonValue; duplicates: JsonDuplicate[] }
  | { ok: false; line: number; column: number; message: string };

class JsonSyntax extends Error {
  readonly at: number;
  constructor(message: string, at: number) {
    super(message);
    this.at = at;
  }
}

/** Joins a path the way problems name it: `steps[3].limits.thdDb`. */
export function joinPath(path: string, key: string | number): string {
  if (typeof key === 'number') return `${path}[${key}]`;
  // A name that is not a plain identifier is quoted so the path stays readable and unambiguous.
  const name = /^[A-Za-z_$][A-Za-z0-9_$]*$/.test(key) ? key : JSON.stringify(key);
  return path === '' ? name : `${path}.${name}`;
}

export function readJsonText(text: string): JsonRead {
  // RFC 8259 §8.1: a reader may ignore a byte order mark; editors on some systems add one.
  let i = text.charCodeAt(0) === 0xfeff ? 1 : 0;
  const duplicates: JsonDuplicate[] = [];

  const describe = (at: number) => {
    if (at >= text.length) return 'the end of the file';
    const ch = text[at];
    if (ch === '\n' || ch === '\r') return 'the end of the line';
    return `“${ch}”`;
  };
  const skipSpace = () => {
    // §2: only space, tab, line feed and carriage return are whitespace.
    while (i < text.length) {
      const c = text[i];
      if (c === ' ' || c === '\t' || c === '\n' || c === '\r') i++;
      else break;
    }
  };
  const expectChar = (ch: string, what: string) => {
    if (text[i] !== ch) throw new JsonSyntax(`expected ${what}, found ${describe(i)}`, i);
    i++;
  };

  const readString = (): string => {
    const start = i;
    expectChar('"', 'a string in double quotes');
    let out = '';
    for (;;) {
      if (i >= text.length) throw new JsonSyntax('this string is not closed (a " is missing)', start);
      const c = text.charCodeAt(i);
      if (c === 0x22) {
        i++;
        return out;
      }
      if (c < 0x20) {
        // §7: control characters must be escaped; an unescaped line break is the usual cause.
        throw new JsonSyntax(c === 0x0a || c === 0x0d ? 'this string runs past the end of the line (a " is missing, or write \\n)' : 'a control character inside a string must be written as an escape (\\t, \\n, \\u0000)', i);
      }
      if (c === 0x5c) {
        const e = text[i + 1];
        const simple: Record<string, string> = { '"': '"', '\\': '\\', '/': '/', b: '\b', f: '\f', n: '\n', r: '\r', t: '\t' };
        if (e !== undefined && e in simple) {
          out += simple[e];
          i += 2;
        } else if (e === 'u' && /^[0-9A-Fa-f]{4}$/.test(text.slice(i + 2, i + 6))) {
          out += String.fromCharCode(parseInt(text.slice(i + 2, i + 6), 16));
          i += 6;
        } else {
          throw new JsonSyntax(`“\\${e ?? ''}” is not a JSON escape; a backslash is written \\\\ (a regular expression's \\d becomes \\\\d)`, i);
        }
        continue;
      }
      out += text[i];
      i++;
    }
  };

  const readNumber = (): number => {
    // §6: -? int frac? exp?, with no leading zeros, no leading +, no bare dot, no NaN or Infinity.
    const match = /^-?(?:0|[1-9][0-9]*)(?:\.[0-9]+)?(?:[eE][+-]?[0-9]+)?/.exec(text.slice(i, i + 400));
    if (!match) throw new JsonSyntax(`${describe(i)} does not start a JSON value (a number, a string in double quotes, true, false, null, [ or {)`, i);
    const after = text[i + match[0].length];
    if (after !== undefined && /[0-9A-Za-z.+-]/.test(after)) {
      throw new JsonSyntax(`“${text.slice(i, i + match[0].length + 1)}…” is not a JSON number (write plain decimals such as -0.5 or 14, without leading zeros)`, i);
    }
    i += match[0].length;
    const value = Number(match[0]);
    if (!Number.isFinite(value)) throw new JsonSyntax('this number is too large to represent', i - match[0].length);
    return value;
  };

  const readValue = (path: string, depth: number): JsonValue => {
    // A procedure is a few levels deep; a far deeper file is a mistake, not a procedure.
    if (depth > 64) throw new JsonSyntax('nested too deeply', i);
    skipSpace();
    const c = text[i];
    if (c === '{') {
      i++;
      const object: { [key: string]: JsonValue } = {};
      skipSpace();
      if (text[i] === '}') {
        i++;
        return object;
      }
      for (;;) {
        skipSpace();
        if (text[i] !== '"') throw new JsonSyntax(`expected a member name in double quotes, found ${describe(i)}${text[i] === '}' ? ' (a comma before } is not allowed in JSON)' : ''}`, i);
        const name = readString();
        skipSpace();
        expectChar(':', '“:” after the member name');
        const memberPath = joinPath(path, name);
        const value = readValue(memberPath, depth + 1);
        if (Object.prototype.hasOwnProperty.call(object, name)) duplicates.push({ path: memberPath, name });
        // defineProperty so that a member named __proto__ is kept as data, never as a prototype.
        Object.defineProperty(object, name, { value, enumerable: true, writable: true, configurable: true });
        skipSpace();
        if (text[i] === ',') {
          i++;
          continue;
        }
        if (text[i] === '}') {
          i++;
          return object;
        }
        throw new JsonSyntax(`expected “,” or “}” after a member, found ${describe(i)}`, i);
      }
    }
    if (c === '[') {
      i++;
      const array: JsonValue[] = [];
      skipSpace();
      if (text[i] === ']') {
        i++;
        return array;
      }
      for (;;) {
        skipSpace();
        if (text[i] === ']') throw new JsonSyntax('a comma before ] is not allowed in JSON', i);
        array.push(readValue(joinPath(path, array.length), depth + 1));
        skipSpace();
        if (text[i] === ',') {
          i++;
          continue;
        }
        if (text[i] === ']') {
          i++;
          return array;
        }
        throw new JsonSyntax(`expected “,” or “]” after an item, found ${describe(i)}`, i);
      }
    }
    if (c === '"') return readString();
    for (const [word, value] of [
      ['true', true],
      ['false', false],
      ['null', null],
    ] as const) {
      if (text.startsWith(word, i)) {
        i += word.length;
        return value;
      }
    }
    if (c === undefined) throw new JsonSyntax('the file ends where a value was expected', i);
    if (c === "'") throw new JsonSyntax('strings are written in double quotes in JSON', i);
    return readNumber();
  };

  try {
    const value = readValue('', 0);
    skipSpace();
    if (i < text.length) throw new JsonSyntax(`unexpected ${describe(i)} after the end of the JSON value`, i);
    return { ok: true, value, duplicates };
  } catch (error) {
    if (!(error instanceof JsonSyntax)) throw error;
    const { line, column } = lineAndColumn(text, error.at);
    return { ok: false, line, column, message: error.message };
  }
}

/** 1-based line and column of a character offset; CR LF, LF and a lone CR each end a line. */
export function lineAndColumn(text: string, at: number): { line: number; column: number } {
  let line = 1;
  let lineStart = 0;
  for (let k = 0; k < at && k < text.length; k++) {
    const c = text[k];
    if (c === '\n' || (c === '\r' && text[k + 1] !== '\n')) {
      line++;
      lineStart = k + 1;
    }
  }
  return { line, column: at - lineStart + 1 };
}
