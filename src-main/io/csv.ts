// CSV text: the one writer of fields and records (RFC 4180 quoting; numbers as the shortest decimal that reads
// back to the same double, and never a non-finite number), and parseCsv to read our own tables back. The
// per-frame tensor table (columns, comment block, rows) is the prediction output format:
// io/prediction/prediction-format.ts.
import { clipText, InputError, PhysicsError, type Where } from '../core/errors.ts';
import { strictNumber } from './decimal.ts';

/** A field as RFC 4180 wants it: quoted (with doubled quotes) when it holds a comma, quote, CR or LF. */
export function csvField(value: string): string {
  return /[",\r\n]/.test(value) || /^\s|\s$/.test(value) ? `"${value.replace(/"/g, '""')}"` : value;
}

export type CsvValue = number | string | boolean;

/**
 * One value as CSV text: a number as the shortest decimal that reads back the same (−0 as 0; a non-finite
 * number is refused with a PhysicsError naming `what` and where), a boolean as 1/0, text quoted as RFC 4180 says.
 */
export function csvValue(value: CsvValue, what: string, where: Where = {}): string {
  if (typeof value === 'boolean') return value ? '1' : '0';
  if (typeof value === 'string') return csvField(value);
  if (!Number.isFinite(value)) throw new PhysicsError(`${what} is ${value}`, where);
  return Object.is(value, -0) ? '0' : String(value);
}

/** One CSV record with its newline; `names` (the column names) name a bad value in the error. */
export function csvRecord(values: readonly CsvValue[], names?: readonly string[], where: Where = {}): string {
  return values.map((v, k) => csvValue(v, names?.[k] ?? `field ${k + 1}`, where)).join(',') + '\n';
}

// ---- reading back ----

export interface CsvTable {
  file: string;
  /** The `# ` comment lines before the header, without the leading "# ". */
  comments: string[];
  columns: string[];
  /** Data records as text fields. */
  records: string[][];
  /** 1-based line on which each record starts. */
  lines: number[];
  /** A column as numbers; InputError naming the line if a field is not a finite number. */
  numbers(column: string): Float64Array;
  /** A column as text. */
  text(column: string): string[];
}

/** Read a CSV table (RFC 4180 quoting, `#` comment lines before the header, LF or CRLF line ends). */
export function parseCsv(text: string, file: string): CsvTable {
  const comments: string[] = [];
  const records: string[][] = [];
  const lines: number[] = [];
  let line = 1;
  let i = text.charCodeAt(0) === 0xfeff ? 1 : 0; // a byte-order mark carries nothing
  const n = text.length;
  let header: string[] | null = null;
  while (i < n) {
    // comment and blank lines before the header
    if (header === null && (text[i] === '#' || text[i] === '\n' || text.startsWith('\r\n', i))) {
      let end = text.indexOf('\n', i);
      if (end < 0) end = n;
      const l = text.slice(i, end).replace(/\r$/, '');
      if (l.startsWith('#')) comments.push(l.replace(/^# ?/, ''));
      i = end + 1;
      line++;
      continue;
    }
    const startLine = line;
    const fields: string[] = [];
    let field = '';
    for (;;) {
      if (i < n && text[i] === '"') {
        i++;
        for (;;) {
          if (i >= n) throw new InputError('a quoted field is not closed', { file, line: startLine }, 'close it with " (a quote inside a field is written "")');
          const c = text[i];
          if (c === '"') {
            if (text[i + 1] === '"') {
              field += '"';
              i += 2;
              continue;
            }
            i++;
            break;
          }
          if (c === '\n') line++;
          field += c;
          i++;
        }
        if (i < n && text[i] !== ',' && text[i] !== '\n' && !text.startsWith('\r\n', i)) {
          throw new InputError('text after the closing quote of a field', { file, line }, 'put the comma right after the closing "');
        }
      } else {
        let j = i;
        while (j < n && text[j] !== ',' && text[j] !== '\n') j++;
        field = text.slice(i, j).replace(/\r$/, '');
        if (field.includes('"')) throw new InputError('a quote inside an unquoted field', { file, line }, 'quote the whole field and double the inner quote ("")');
        i = j;
      }
      fields.push(field);
      field = '';
      if (i < n && text[i] === ',') {
        i++;
        continue;
      }
      if (text.startsWith('\r\n', i)) i += 2;
      else if (i < n) i++; // '\n'
      line++;
      break;
    }
    if (header === null) {
      header = fields;
      const seen = new Set<string>();
      for (const h of header) {
        if (seen.has(h)) throw new InputError(`column '${clipText(h)}' appears twice in the header`, { file, line: startLine }, 'give every column its own name');
        seen.add(h);
      }
      continue;
    }
    if (fields.length === 1 && fields[0] === '') continue; // blank line
    if (fields.length !== header.length) {
      throw new InputError(`row has ${fields.length} fields, the header has ${header.length}`, { file, line: startLine }, 'every row needs one value per column; quote fields that contain commas');
    }
    records.push(fields);
    lines.push(startLine);
  }
  if (header === null) throw new InputError('no header row', { file, line }, 'the first line that is not a # comment must name the columns');
  const columns = header;
  const indexOf = (c: string): number => {
    const k = columns.indexOf(c);
    if (k < 0) throw new InputError(`no column '${clipText(c)}'`, { file }, `the table has: ${clipText(columns.join(', '))}`);
    return k;
  };
  return {
    file,
    comments,
    columns,
    records,
    lines,
    numbers(c) {
      const k = indexOf(c);
      return Float64Array.from(records, (r, j) => {
        const t = r[k].trim();
        const x = strictNumber(t);
        if (!Number.isFinite(x)) throw new InputError(`column '${clipText(c)}' holds '${clipText(r[k])}', not a finite number`, { file, line: lines[j] }, 'the column must hold numbers on every row');
        return x;
      });
    },
    text(c) {
      const k = indexOf(c);
      return records.map((r) => r[k]);
    },
  };
}
