// The OFF reader scans the text in place and reads numbers without making strings. It must read exactly what the
// plain way of reading the same text gives: split into lines and words, each word through `Number()` (ECMAScript
// StringToNumber, the platform's own reader, is the reference here), then the same mesh clean-up.
import { describe, expect, it } from 'vitest';
import { finishMesh } from '../../../src/core/mesh/geometry';
import { importMesh } from '../../../src/core/mesh/import';
import { readNumber } from '../../../src/core/mesh/text';
import { createRng } from '../../../src/core/rng';
import { fixture, textBuffer } from '../../meshes';

/** The plain reading: lines, comments cut, words split on white space, `Number()` on each. */
function plainOff(text: string) {
  const lines = text
    .split(/\r\n|\n|\r/)
    .map((l) => (l.includes('#') ? l.slice(0, l.indexOf('#')) : l).trim())
    .filter((l) => l);
  const head = lines[0].split(/\s+/);
  let at = 1;
  const counts = head.length >= 3 ? head.slice(1) : lines[at++].split(/\s+/);
  const [nv, nf] = counts.map(Number);
  const positions = new Float32Array(nv * 3);
  for (let v = 0; v < nv; v++) {
    const w = lines[at++].split(/\s+/).map(Number);
    positions.set(w.slice(0, 3), v * 3);
  }
  const indices: number[] = [];
  for (let f = 0; f < nf; f++) {
    const w = lines[at++].split(/\s+/).map(Number);
    for (let k = 1; k < w[0] - 1; k++) indices.push(w[1], w[1 + k], w[2 + k]);
  }
  return finishMesh('plain.off', 'off', { positions, indices: Uint32Array.from(indices) }, text.length);
}

describe('reading numbers in place', () => {
  const read = (word: string) => readNumber(` ${word} `, 1, word.length + 1);

  it('gives what Number() gives for hand-picked words, down to the sign of zero', () => {
    const words = [
      '0',
      '-0',
      '+0',
      '1',
      '-1',
      '.5',
      '5.',
      '-.5',
      '+.5',
      '0.1',
      '0.2',
      '0.3',
      '-0.49212',
      '0.059055',
      '1e3',
      '1E-3',
      '2.5e+10',
      '1e22',
      '1e23',
      '1e-22',
      '1e-23',
      '123456789012345',
      '1234567890123456',
      '0.1234567890123456789',
      '9007199254740993',
      '1.7976931348623157e308',
      '4.9e-324',
      '00012.50',
      '1e',
      '1e+',
      '.',
      '-',
      '+',
      'e5',
      '.e1',
      'nan',
      'NaN',
      '-nan',
      'Infinity',
      '-Infinity',
      'inf',
      '0x1A',
      '1_000',
      '1.2.3',
      '3 ',
      '12abc',
      '1e0000005',
      '0.000000000000000000001234',
      '100000000000000000000000',
    ];
    for (const w of words) expect(Object.is(read(w), Number(w)), w).toBe(true);
  });

  it('gives what Number() gives for 20,000 random decimals of 1–17 digits with and without exponents (seeded)', () => {
    const rng = createRng(7);
    for (let i = 0; i < 20_000; i++) {
      const digits = 1 + rng.int(17);
      let s = '';
      for (let d = 0; d < digits; d++) s += String(rng.int(10));
      const dot = rng.int(digits + 1);
      let word = `${rng.int(3) === 0 ? '-' : ''}${s.slice(0, dot)}.${s.slice(dot)}`;
      if (rng.int(3) === 0) word += `e${rng.int(2) ? '-' : ''}${rng.int(40)}`;
      expect(Object.is(read(word), Number(word)), word).toBe(true);
      // and as the 32-bit float a vertex keeps
      expect(Math.fround(read(word))).toBe(Math.fround(Number(word)));
    }
  });
});

describe('the OFF reader against the plain reading', () => {
  const files = ['cube.off', 'cube_quad.off', 'sphere.off', 'cactus.off', 'pinion.off', 'joint.off'];
  for (const name of files) {
    it(`${name}: the same vertices and triangles`, () => {
      const buffer = fixture(`real-meshes/${name}`);
      const text = new TextDecoder().decode(new Uint8Array(buffer));
      const ours = importMesh(buffer, name).mesh;
      const plain = plainOff(text).mesh;
      expect(ours.positions).toEqual(plain.positions);
      expect(ours.indices).toEqual(plain.indices);
    });
  }

  it('CR LF and lone CR line breaks, comments, tabs, counts on the keyword line, colours after the coordinates', () => {
    const text = [
      'COFF 4 2 0  # a comment after the counts',
      '# a whole-line comment',
      '0 0 0\t255 0 0 255',
      '  1e0 0 0 0 255 0 255  ',
      '',
      '0 1.0 0 0 0 255 255 # trailing comment',
      '0\t0\t+1 9 9 9 9',
      '3 0 1 2 10 20 30',
      '3 0 3 1',
    ].join('\r\n');
    const ours = importMesh(textBuffer(text), 'tetra.off').mesh;
    const plain = plainOff(text).mesh;
    expect(ours.positions).toEqual(plain.positions);
    expect(ours.indices).toEqual(plain.indices);
    const lone = importMesh(textBuffer(text.replaceAll('\r\n', '\r')), 'tetra.off').mesh;
    expect(lone.indices).toEqual(plain.indices);
  });
});
