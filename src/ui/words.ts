// The quality report in plain words: what the numbers mean for finding parts, and a verdict against the
// baselines. Pure functions (no DOM), so they are tested in Node.

import type { EvaluationReport } from '../core/quality/evaluate';
import type { Progress } from './state';

type Row = NonNullable<EvaluationReport['methods'][keyof EvaluationReport['methods']]>;

/** What each column measures, for the table's headers. */
export const METRIC_HELP: Record<'nn' | 'first_tier' | 'second_tier' | 'dcg' | 'map' | 'p_at_5', string> = {
  nn: 'share of parts whose first result comes from their own folder',
  first_tier: 'share of a part’s folder found in as many results as the folder has other parts',
  second_tier: 'the same in twice as many results',
  dcg: 'how early same-folder parts come, the first results counting most (1 = all first)',
  map: 'mean average precision: the whole ranking against a perfect one (1 = every same-folder part before any other)',
  p_at_5: 'share of the first five results from the part’s own folder',
};

/**
 * A gap in mAP below this is within what reseeding alone moves on the measured libraries (three-seed spreads of
 * 0.003–0.013 in docs/results.md, doubled for a single run): common practice is to call such gaps a tie.
 */
export const TIE = 0.02;

const pct = (x: number) => `${Math.round(x * 100)} %`;

/** Plain sentences about a report: the best reading of the trained model (or the baselines alone) and a verdict. */
export function qualitySummary(r: EvaluationReport): string[] {
  const m = r.methods;
  const learned: Row | undefined = m['learned+diffusion'] ?? m.learned;
  const untrained: Row | undefined = m['untrained+diffusion'] ?? m.untrained;
  const d2: Row | undefined = m['d2+diffusion'] ?? m.d2;
  const lines: string[] = [];
  const say = (who: string, row: Row) =>
    `${who} finds a part from the query’s own folder first for ${pct(row.nn)} of the ${r.parts} parts, and ranks the whole folder ${pct(row.map)} as well as a perfect ranking would (mAP ${row.map.toFixed(3)}).`;
  if (learned) lines.push(say('The trained model', learned));
  else if (untrained) lines.push(say('Without a trained model, the encoder with random weights', untrained));
  if (learned && untrained) {
    const gain = learned.map - untrained.map;
    lines.push(
      gain >= TIE
        ? `Training helped: mAP ${gain >= 0 ? '+' : ''}${gain.toFixed(3)} over the same encoder with random weights (first hits ${pct(untrained.nn)} there).`
        : gain > -TIE
          ? `Training has not yet helped beyond random weights on this library (mAP ${learned.map.toFixed(3)} against ${untrained.map.toFixed(3)}): train longer, or check that the folders group parts by shape.`
          : `The trained model ranks worse than random weights here (mAP ${learned.map.toFixed(3)} against ${untrained.map.toFixed(3)}): train longer or with other settings before relying on it.`,
    );
  }
  if (d2 && (learned ?? untrained)) {
    const best = (learned ?? untrained)!;
    lines.push(
      best.map >= d2.map + TIE
        ? `Both beat the classic shape-distribution descriptor (D2: ${pct(d2.nn)} first hits, mAP ${d2.map.toFixed(3)}).`
        : `The classic shape-distribution descriptor does about as well or better here (D2: ${pct(d2.nn)} first hits, mAP ${d2.map.toFixed(3)}).`,
    );
  }
  return lines;
}

/** A duration in words: "42 s", "3 min 5 s", "1 h 12 min". */
export function formatDuration(sec: number): string {
  const s = Math.max(0, Math.round(sec));
  if (s >= 3600) return `${Math.floor(s / 3600)} h ${Math.round((s % 3600) / 60)} min`;
  const m = Math.floor(s / 60);
  return m ? `${m} min ${s % 60} s` : `${s} s`;
}

/**
 * The time a job has left at its pace so far (the time taken over the share done, the rest at the same rate),
 * or '' until there is a pace to go by: nothing done yet, or under two seconds in.
 */
export function timeLeft(p: Progress, now: number): string {
  if (p.startedAt === undefined || p.done <= 0 || p.done >= p.total) return '';
  const elapsed = (now - p.startedAt) / 1000;
  if (elapsed < 2) return '';
  return `about ${formatDuration((elapsed / p.done) * (p.total - p.done))} left`;
}
