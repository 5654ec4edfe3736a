// Units of length. Formats that say their units (STEP, IGES, glTF, 3MF) are read in millimetres; for the rest
// (STL, OBJ, PLY, OFF, VRML, point lists) a person says what one file unit is — per folder in the workbench, with
// --units on the command line. Sizes, the size filter and exports then use millimetres wherever units are known.

import type { MeshInfo } from './mesh/types';

/** Millimetres per unit of the names a person may give (exact by definition: 1 in = 25.4 mm, NIST SP 811 B.8). */
export const NAMED_UNITS: Readonly<Record<string, number>> = { mm: 1, cm: 10, m: 1000, inch: 25.4, in: 25.4 };

/** The choices offered on screen, in order (value = mm per unit). */
export const UNIT_CHOICES: readonly { readonly name: string; readonly mm: number }[] = [
  { name: 'mm', mm: 1 },
  { name: 'cm', mm: 10 },
  { name: 'm', mm: 1000 },
  { name: 'inch', mm: 25.4 },
];

/** Millimetres per unit from a name (mm, cm, m, inch) or a positive number of mm; null when it is neither. */
export function parseUnits(raw: string): number | null {
  const text = raw.trim().toLowerCase();
  const factor = NAMED_UNITS[text] ?? (text === '' ? NaN : Number(text));
  return factor > 0 && Number.isFinite(factor) ? factor : null;
}

/** How a factor reads: its name where it has one, else "1 unit = F mm". */
export function unitsName(mmPerUnit: number): string {
  const named = UNIT_CHOICES.find((c) => c.mm === mmPerUnit);
  return named ? named.name : `1 unit = ${mmPerUnit} mm`;
}

/**
 * Millimetres per coordinate unit of a part: 1 where its format says millimetres, the given factor for files
 * without units, or null when nobody has said (sizes then stay in file units).
 */
export function scaleToMm(info: Pick<MeshInfo, 'units'>, mmPerFileUnit: number | null | undefined): number | null {
  if (info.units === 'mm') return 1;
  return mmPerFileUnit ?? null;
}

/**
 * A part's bounding-box diagonal in mm where its units are known (its format's, or `mmPerFileUnit` as set for it),
 * else in file units: what size filters and the size prior compare.
 */
export function diagonalMm(
  part: { readonly diagonal: number; readonly info: Pick<MeshInfo, 'units'> },
  mmPerFileUnit: number | null | undefined,
): number {
  return part.diagonal * (scaleToMm(part.info, mmPerFileUnit) ?? 1);
}

export interface PartSize {
  /** Bounding-box size x, y, z in `units`. */
  readonly size: number[];
  readonly units: 'mm' | 'file units';
  /** What the file's coordinates were multiplied by (1 when they stay in file units). */
  readonly scale: number;
}

/** A part's size in mm where its units are known (its format's own, or the factor given), else in file units. */
export function partSize(
  info: Pick<MeshInfo, 'units' | 'extents'>,
  mmPerFileUnit: number | null | undefined,
): PartSize {
  const scale = scaleToMm(info, mmPerFileUnit);
  if (scale === null) return { size: [...info.extents], units: 'file units', scale: 1 };
  return { size: info.extents.map((v) => v * scale), units: 'mm', scale };
}

/** A size in words, "12.5 × 12.5 × 2.50 mm", each value to `digits` significant digits. */
export function sizeWords(s: { readonly size: readonly number[]; readonly units: string }, digits = 3): string {
  return `${s.size.map((v) => v.toPrecision(digits)).join(' × ')} ${s.units}`;
}
