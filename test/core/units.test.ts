// Units of length: what one file unit measures, and sizes in millimetres where units are known.

import { describe, expect, it } from 'vitest';
import { parseUnits, partSize, scaleToMm, sizeWords, unitsName } from '../../src/core/units';
import { embeddingRow } from '../../src/core/retrieval/export';

describe('units of length (NIST SP 811, appendix B.8: 1 in = 25.4 mm exactly; SI prefixes c = 10⁻², m = 10⁻³)', () => {
  it('named units and factors parse to millimetres per unit; anything else is refused', () => {
    expect(parseUnits('mm')).toBe(1);
    expect(parseUnits('cm')).toBe(10);
    expect(parseUnits('m')).toBe(1000);
    expect(parseUnits('inch')).toBe(25.4);
    expect(parseUnits(' IN ')).toBe(25.4);
    expect(parseUnits('2.54')).toBe(2.54); // KiCad's VRML unit, 0.1 in (common practice, no published source)
    for (const bad of ['', 'feet', '0', '-1', 'NaN', 'Infinity', '1e400']) expect(parseUnits(bad)).toBeNull();
    expect(unitsName(25.4)).toBe('inch');
    expect(unitsName(2.54)).toBe('1 unit = 2.54 mm');
  });

  it('a format with units stays in mm whatever is said; a file without units follows its folder, else file units', () => {
    const step = { units: 'mm' as const, extents: [10, 20, 30] as [number, number, number] };
    const stl = { units: 'file' as const, extents: [1, 2, 0.5] as [number, number, number] };
    expect(scaleToMm(step, 25.4)).toBe(1);
    expect(partSize(step, 25.4)).toEqual({ size: [10, 20, 30], units: 'mm', scale: 1 });
    expect(scaleToMm(stl, undefined)).toBeNull();
    expect(partSize(stl, null)).toEqual({ size: [1, 2, 0.5], units: 'file units', scale: 1 });
    expect(partSize(stl, 25.4)).toEqual({ size: [25.4, 50.8, 12.7], units: 'mm', scale: 25.4 });
    expect(sizeWords(partSize(stl, 25.4))).toBe('25.4 × 50.8 × 12.7 mm');
  });

  it('exported rows carry sizes in mm where the units are known', () => {
    const stl = { units: 'file' as const, extents: [1, 2, 2] as [number, number, number] };
    expect(embeddingRow('a.stl', 'f', stl, 3, 25.4)).toEqual({
      file: 'a.stl',
      label: 'f',
      extents: [25.4, 50.8, 50.8],
      diagonal: 76.19999999999999,
      units: 'mm',
    });
    expect(embeddingRow('a.stl', 'f', stl, 3, undefined)).toEqual({
      file: 'a.stl',
      label: 'f',
      extents: [1, 2, 2],
      diagonal: 3,
      units: 'file',
    });
  });
});
