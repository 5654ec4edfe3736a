// Plain point lists: one point a line, "x y z" and maybe more columns (normals, colours: ignored). The
// separator is read from the first data line: white space, commas, or semicolons; with semicolons a comma
// is the decimal mark ("1,5;2,5;3,5" is the point 1.5 2.5 3.5, as spreadsheets in many locales write it).
// A line in which no field is a number is a header (a CSV's column names); any other line must be a point.

import { finishMesh } from './geometry';
import { MeshImportError, type ImportedMesh } from './types';

type Separator = 'space' | 'comma' | 'semicolon';

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$|^[+-]?(nan|inf|infinity)$/i;

function separatorOf(line: string): Separator {
  if (line.includes(';')) return 'semicolon';
  if (line.includes(',')) return 'comma';
  return 'space';
}

function fieldsOf(line: string, sep: Separator): string[] {
  if (sep === 'space') return line.split(/\s+/);
  return line.split(sep === 'comma' ? ',' : ';').map((f) => f.trim());
}

/** A field's value (NaN and ±Infinity kept, for the finiteness check to name), or null when it is no number. */
function numberOf(field: string, sep: Separator): number | null {
  const f = sep === 'semicolon' ? field.replace(',', '.') : field;
  if (!NUMBER.test(f)) return null;
  if (/^[+-]?nan$/i.test(f)) return NaN;
  if (/^[+-]?inf/i.test(f)) return f.startsWith('-') ? -Infinity : Infinity;
  return Number(f);
}

const SEPARATOR_NAMES: Record<Separator, string> = { space: 'spaces', comma: 'commas', semicolon: 'semicolons' };

/** Whether a line's characters fit the file's separator (with semicolons, commas are decimal marks). */
function fitsSeparator(line: string, sep: Separator): boolean {
  if (sep === 'space') return !line.includes(',') && !line.includes(';');
  if (sep === 'comma') return !line.includes(';');
  return true;
}

export function parseXyz(text: string, file: string, fileBytes: number): ImportedMesh {
  const values: number[] = [];
  const lines = text.split(/\r\n|\n|\r/);
  let sep: Separator | null = null;
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i].trim();
    if (!line || line.startsWith('#') || line.startsWith('//')) continue;
    const lineSep: Separator = sep ?? separatorOf(line);
    const numbers = fieldsOf(line, lineSep).map((f) => numberOf(f, lineSep));
    const isNumber = (k: number) => k < numbers.length && numbers[k] !== null;
    if (values.length > 0 && !fitsSeparator(line, lineSep)) {
      throw new MeshImportError(
        file,
        'parse-failed',
        `line ${i + 1} mixes separators: earlier lines use ${SEPARATOR_NAMES[lineSep]} ("${line.slice(0, 40)}")`,
      );
    }
    if (numbers.every((v) => v === null)) {
      if (values.length === 0) continue; // a header: column names before the first point
      throw new MeshImportError(file, 'parse-failed', `line ${i + 1} is not a point "x y z": "${line.slice(0, 40)}"`);
    }
    if (!isNumber(0) || !isNumber(1) || !isNumber(2)) {
      throw new MeshImportError(file, 'parse-failed', `line ${i + 1} is not a point "x y z": "${line.slice(0, 40)}"`);
    }
    sep = lineSep;
    values.push(numbers[0]!, numbers[1]!, numbers[2]!);
  }
  if (values.length === 0) throw new MeshImportError(file, 'no-geometry', 'no "x y z" point lines found');
  return finishMesh(file, 'xyz', { positions: Float32Array.from(values), indices: null }, fileBytes);
}
