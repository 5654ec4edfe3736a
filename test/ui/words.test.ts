// The quality report's plain words follow the numbers: each sentence is checked on hand-made reports.
import { describe, expect, it } from 'vitest';
import type { EvaluationReport } from '../../src/core/quality/evaluate';
import { formatDuration, qualitySummary, timeLeft } from '../../src/ui/words';

const row = (nn: number, map: number) => ({ nn, first_tier: 0, second_tier: 0, dcg: 0, map, p_at_5: 0 });

describe('quality in plain words', () => {
  it('says how often the first hit is from the own folder, and that training helped when mAP rose past a tie', () => {
    const r: EvaluationReport = {
      parts: 112,
      labels: 14,
      methods: {
        'learned+diffusion': row(0.92, 0.798),
        'untrained+diffusion': row(0.8, 0.6),
        'd2+diffusion': row(0.82, 0.63),
      },
    };
    const [first, verdict, d2] = qualitySummary(r);
    expect(first).toMatch(/trained model finds a part from the query’s own folder first for 92 % of the 112 parts/);
    expect(first).toMatch(/mAP 0\.798/);
    expect(verdict).toMatch(/^Training helped: mAP \+0\.198/);
    expect(d2).toMatch(/^Both beat the classic shape-distribution descriptor/);
  });
  it('calls a gap under the tie margin a tie, and a loss a loss', () => {
    const tie: EvaluationReport = {
      parts: 10,
      labels: 2,
      methods: { learned: row(0.7, 0.61), untrained: row(0.7, 0.6), d2: row(0.7, 0.65) },
    };
    expect(qualitySummary(tie)[1]).toMatch(/has not yet helped beyond random weights/);
    expect(qualitySummary(tie)[2]).toMatch(/does about as well or better/);
    const worse: EvaluationReport = {
      parts: 10,
      labels: 2,
      methods: { learned: row(0.5, 0.4), untrained: row(0.7, 0.6) },
    };
    expect(qualitySummary(worse)[1]).toMatch(/ranks worse than random weights/);
  });
  it('without a model, speaks of the random-weight encoder', () => {
    const r: EvaluationReport = { parts: 10, labels: 2, methods: { untrained: row(0.5, 0.4), d2: row(0.3, 0.2) } };
    expect(qualitySummary(r)[0]).toMatch(/^Without a trained model, the encoder with random weights finds/);
  });
});

import { FOLDER_COLOURS, folderMark } from '../../src/ui/components/map-panel';

describe('folder marks on the map', () => {
  it('use the Okabe–Ito colours (Okabe & Ito 2008; hex values as the authors publish them, quoted from memory) with black as slate', () => {
    expect(FOLDER_COLOURS.slice(0, 7)).toEqual([
      '#E69F00',
      '#56B4E9',
      '#009E73',
      '#F0E442',
      '#0072B2',
      '#D55E00',
      '#CC79A7',
    ]);
  });
  it('give 32 folders 32 different marks (colour × shape)', () => {
    const marks = new Set(Array.from({ length: 32 }, (_, i) => JSON.stringify(folderMark(i))));
    expect(marks.size).toBe(32);
  });
});

describe('time left in words', () => {
  it('the rest at the pace so far: 30 of 120 parts in 10 s leaves 90 parts, 30 s', () => {
    expect(timeLeft({ done: 30, total: 120, what: '', startedAt: 1_000 }, 11_000)).toBe('about 30 s left');
    expect(timeLeft({ done: 10, total: 1000, what: '', startedAt: 0 }, 5_000)).toBe('about 8 min 15 s left');
  });
  it('says nothing until there is a pace to go by, or when the job is not timed or is done', () => {
    expect(timeLeft({ done: 0, total: 10, what: '', startedAt: 0 }, 60_000)).toBe('');
    expect(timeLeft({ done: 5, total: 10, what: '', startedAt: 0 }, 1_000)).toBe('');
    expect(timeLeft({ done: 5, total: 10, what: '' }, 60_000)).toBe('');
    expect(timeLeft({ done: 10, total: 10, what: '', startedAt: 0 }, 60_000)).toBe('');
  });
  it('durations read in seconds, minutes or hours', () => {
    expect(formatDuration(42.4)).toBe('42 s');
    expect(formatDuration(185)).toBe('3 min 5 s');
    expect(formatDuration(4320)).toBe('1 h 12 min');
  });
});
