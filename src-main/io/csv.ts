// Per-frame tensor tables as CSV: a block of `# ` comment lines (what the file is, units, source model, the
// note that predictions are model estimates), one header row, one row per frame. Strings are quoted as RFC 4180
// says; numbers are written with the shortest decimal that reads back to the same double. Also a streaming
// writer for long trajectories (atomic, via atomicWriteStream) and parseCsv to read our own tables back.
import { InputError, PhysicsError } from '../core/errors.ts';
import type { Mat3 } from '../core/geometry/frame.ts';
import { anisotropy, isotropicMean, symmetricEigen } from '../core/dielectric/tensor.ts';
import { polarisabilityFromA3, type PolarisabilityUnit } from '../core/dielectric/units.ts';
import { atomicWriteStream, writeFileAtomic } from './atomic.ts';

/** One frame's results. Tensors are symmetric 3×3, row-major; `alpha` in Å³ (polarisability volume). */
export interface TensorRow {
  /** 0-based frame index in its source file. */
  frame: number;
  /** Values of the tag columns named in the options (file name, frame tag, phase, …). */
  tags?: Record<string, string | number>;
  /** Cell volume in Å³. */
  volumeA3: number;
  /** Optical dielectric tensor ε∞ (dimensionless). */
  eps: Mat3;
  /** Cell polarisability in Å³ of the kind options.alpha.kind (needed when options.alpha is set). */
  alpha?: Mat3;
  /** Values of the extra columns named in the options (e.g. applicability figures). */
  extra?: Record<string, number>;
}

export interface TensorCsvOptions {
  /** Tag columns after `frame`, in this order. */
  tagColumns?: string[];
  /** Also write the polarisability: which one (conducting-boundary or Clausius–Mossotti) and in which unit. */
  alpha?: { kind: 'alpha-c' | 'alpha-cm'; unit: PolarisabilityUnit };
  /** Extra numeric columns at the end, in this order (the engine's applicability figures, …). */
  extraColumns?: string[];
  /** Units or meaning of the extra columns, printed in the header block. */
  extraDescriptions?: Record<string, string>;
  /** What produced the values, e.g. "model water-v1.pwm (kernel ridge, λ=0+2)" or "reference data". */
  source: string;
  /** True when the values are a model's predictions (adds the note that they are estimates). Default true. */
  predicted?: boolean;
  /** First comment line (default: "Polarweave per-frame dielectric tensors"). */
  title?: string;
}

const COMPONENTS = ['xx', 'yy', 'zz', 'xy', 'xz', 'yz'] as const;
/** Row-major indices of xx yy zz xy xz yz. */
const INDEX = [0, 4, 8, 1, 2, 5];

const UNIT_SUFFIX: Record<PolarisabilityUnit, string> = { A3: 'A3', bohr3: 'bohr3', si: 'Cm2perV' };
const UNIT_TEXT: Record<PolarisabilityUnit, string> = {
  A3: 'Å³ (polarisability volume α/(4πε0))',
  bohr3: 'bohr³ (atomic units, CODATA 2018 bohr)',
  si: 'C·m²/V (SI)',
};

function alphaPrefix(kind: 'alpha-c' | 'alpha-cm'): string {
  return kind === 'alpha-c' ? 'alpha_c' : 'alpha_cm';
}

/** The header row's column names for these options. */
export function tensorCsvColumns(options: TensorCsvOptions): string[] {
  const cols = ['frame', ...(options.tagColumns ?? []), 'volume_A3'];
  for (const c of COMPONENTS) cols.push(`eps_${c}`);
  cols.push('eps_iso', 'eps_aniso', 'eps_1', 'eps_2', 'eps_3', 'n_1', 'n_2', 'n_3', 'dn');
  if (options.alpha) {
    const p = alphaPrefix(options.alpha.kind);
    const u = UNIT_SUFFIX[options.alpha.unit];
    for (const c of COMPONENTS) cols.push(`${p}_${c}_${u}`);
    cols.push(`${p}_iso_${u}`, `${p}_aniso_${u}`);
  }
  cols.push(...(options.extraColumns ?? []));
  const seen = new Set<string>();
  for (const c of cols) {
    if (seen.has(c)) throw new RangeError(`tensorCsv: column '${c}' would appear twice`);
    seen.add(c);
  }
  return cols;
}

/** The `# ` comment block that opens the file. */
export function tensorCsvPreamble(options: TensorCsvOptions, created = new Date()): string {
  const lines = [
    options.title ?? 'Polarweave per-frame dielectric tensors',
    'One row per frame: the optical (electronic, high-frequency) dielectric tensor eps_inf and quantities derived from it.',
    'Units: volume_A3 in Å³; eps_* dimensionless; n_1..n_3 refractive indices (dimensionless); dn = n_3 - n_1.',
    'Tensor components xx yy zz xy xz yz of the symmetric tensor, in the Cartesian axes of the input structure.',
    'eps_iso = trace/3; eps_aniso = sqrt(((l1-l2)^2 + (l2-l3)^2 + (l3-l1)^2)/2) of the principal values;',
    'eps_1 <= eps_2 <= eps_3 principal values (Jacobi eigenvalues); n_k = sqrt(eps_k).',
  ];
  if (options.alpha) {
    const p = alphaPrefix(options.alpha.kind);
    const what = options.alpha.kind === 'alpha-c' ? 'conducting-boundary cell polarisability (eps = I + 4 pi alpha_c / V)' : 'Clausius-Mossotti cell polarisability';
    lines.push(`${p}_*: ${what}, in ${UNIT_TEXT[options.alpha.unit]}.`);
  }
  for (const c of options.extraColumns ?? []) {
    const d = options.extraDescriptions?.[c];
    if (d) lines.push(`${c}: ${d}`);
  }
  lines.push(`Source: ${options.source}`);
  if (options.predicted ?? true) lines.push('Note: these values are model estimates (predictions), not measurements or reference calculations.');
  lines.push(`Written: ${created.toISOString()}`);
  return lines.map((l) => `# ${l.replace(/[\r\n]+/g, ' ')}\n`).join('');
}

/** A field as RFC 4180 wants it: quoted (with doubled quotes) when it holds a comma, quote, CR or LF. */
export function csvField(value: string): string {
  return /[",\r\n]/.test(value) || /^\s|\s$/.test(value) ? `"${value.replace(/"/g, '""')}"` : value;
}

function num(x: number, what: string, frame: number): string {
  if (!Number.isFinite(x)) throw new PhysicsError(`${what} is ${x}`, { frame });
  return Object.is(x, -0) ? '0' : String(x);
}

/** One data row (with its newline). */
export function tensorCsvRow(row: TensorRow, options: TensorCsvOptions): string {
  const f = row.frame;
  const out: string[] = [String(f)];
  for (const t of options.tagColumns ?? []) {
    const v = row.tags?.[t];
    if (v === undefined) throw new RangeError(`tensorCsv: frame ${f} has no value for tag column '${t}'`);
    out.push(typeof v === 'number' ? num(v, t, f) : csvField(v));
  }
  out.push(num(row.volumeA3, 'volume', f));
  const e = row.eps;
  if (!e || e.length !== 9) throw new RangeError(`tensorCsv: frame ${f} has no 3×3 eps tensor`);
  for (const i of INDEX) out.push(num(e[i], 'eps', f));
  const { values } = symmetricEigen(e);
  if (values[0] < 0) {
    throw new PhysicsError(`eps has a negative principal value (${values[0].toPrecision(6)}): no real refractive index`, { frame: f });
  }
  const n = Array.from(values, Math.sqrt);
  out.push(num(isotropicMean(e), 'eps_iso', f), num(anisotropy(e), 'eps_aniso', f));
  for (const v of values) out.push(num(v, 'eps principal value', f));
  for (const v of n) out.push(num(v, 'refractive index', f));
  out.push(num(n[2] - n[0], 'birefringence', f));
  if (options.alpha) {
    const a = row.alpha;
    if (!a || a.length !== 9) throw new RangeError(`tensorCsv: frame ${f} has no alpha tensor, but the options ask for one`);
    const u = options.alpha.unit;
    for (const i of INDEX) out.push(num(polarisabilityFromA3(a[i], u), 'alpha', f));
    out.push(num(polarisabilityFromA3(isotropicMean(a), u), 'alpha_iso', f), num(polarisabilityFromA3(anisotropy(a), u), 'alpha_aniso', f));
  }
  for (const c of options.extraColumns ?? []) {
    const v = row.extra?.[c];
    if (v === undefined) throw new RangeError(`tensorCsv: frame ${f} has no value for column '${c}'`);
    out.push(num(v, c, f));
  }
  return out.join(',') + '\n';
}

/** The whole table as text. */
export function tensorCsv(rows: Iterable<TensorRow>, options: TensorCsvOptions): string {
  const parts = [tensorCsvPreamble(options), tensorCsvColumns(options).map(csvField).join(',') + '\n'];
  for (const r of rows) parts.push(tensorCsvRow(r, options));
  return parts.join('');
}

/** Write the table atomically. */
export async function writeTensorCsv(path: string, rows: Iterable<TensorRow>, options: TensorCsvOptions): Promise<void> {
  await writeFileAtomic(path, tensorCsv(rows, options));
}

export interface TensorCsvWriter {
  writeRow(row: TensorRow): Promise<void>;
  /** Make the file appear (atomic rename). */
  commit(): Promise<void>;
  /** Drop it: nothing appears at the path. */
  abort(): Promise<void>;
}

/** Streamed table for long trajectories: rows go to a temporary file, committed atomically at the end. */
export function tensorCsvWriter(path: string, options: TensorCsvOptions): TensorCsvWriter {
  const stream = atomicWriteStream(path);
  const columns = tensorCsvColumns(options);
  let started = false;
  const start = async () => {
    if (!started) {
      started = true;
      await stream.write(tensorCsvPreamble(options) + columns.map(csvField).join(',') + '\n');
    }
  };
  return {
    async writeRow(row) {
      await start();
      let line: string;
      try {
        line = tensorCsvRow(row, options);
      } catch (e) {
        await stream.abort();
        throw e;
      }
      await stream.write(line);
    },
    async commit() {
      await start();
      await stream.commit();
    },
    abort: () => stream.abort(),
  };
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
  let i = 0;
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
        if (seen.has(h)) throw new InputError(`column '${h}' appears twice in the header`, { file, line: startLine }, 'give every column its own name');
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
    if (k < 0) throw new InputError(`no column '${c}'`, { file }, `the table has: ${columns.join(', ')}`);
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
        const x = t === '' ? NaN : Number(t);
        if (!Number.isFinite(x)) throw new InputError(`column '${c}' holds '${r[k]}', not a finite number`, { file, line: lines[j] }, 'the column must hold numbers on every row');
        return x;
      });
    },
    text(c) {
      const k = indexOf(c);
      return records.map((r) => r[k]);
    },
  };
}
