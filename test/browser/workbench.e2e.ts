// End-to-end: the built workbench in headless Chromium (Debian's), driven by playwright-core.
// Screenshots of each panel go to test-artifacts/ (ignored by git).

import { mkdirSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext, Page, Worker } from 'playwright-core';
import { chromiumAvailable, launch } from './chromium';
import { startPreview } from './server';
import { longest, mostCpu, tracePageTasks } from './page-cpu';
import { generateLibrary } from '../../src/gen/library';
import { removeScratch, scratchDir } from '../scratch';

const ARTIFACTS = 'test-artifacts';
const available = chromiumAvailable();

afterAll(removeScratch);
if (!available) console.warn('browser tests skipped: no Chromium at /usr/bin/chromium (apt-get install -y chromium)');

/** Starts collecting the page's long tasks (over 50 ms, by the Long Tasks API) afresh. */
async function watchLongTasks(page: Page): Promise<void> {
  await page.evaluate(() => {
    const w = window as unknown as { longTasks: number[]; longTaskObserver?: PerformanceObserver };
    w.longTasks = [];
    // One observer a page (another would count every task again).
    w.longTaskObserver ??= new PerformanceObserver((list) => {
      for (const e of list.getEntries()) w.longTasks.push(e.duration);
    });
    w.longTaskObserver.observe({ type: 'longtask', buffered: false });
  });
}

/** The durations of the long tasks since `watchLongTasks`, in ms. */
const longTasks = (page: Page): Promise<number[]> =>
  page.evaluate(() => (window as unknown as { longTasks: number[] }).longTasks);

/**
 * A folder of generated parts (the generator's families, one file per variant, for each seed), named so the seeds'
 * files do not collide, where the folder picker can take them.
 */
function generatedFolder(prefix: string, seeds: readonly number[], formats: ('off' | 'stl-binary')[]): string {
  const dir = scratchDir(prefix);
  for (const seed of seeds)
    for (const f of generateLibrary(seed, { formats, extras: false }).files) {
      const path = join(dir, f.path.replace('/', `/s${seed}-`));
      mkdirSync(join(path, '..'), { recursive: true });
      writeFileSync(path, f.bytes);
    }
  return dir;
}

/** A fresh browser on the workbench, the demo library read and then emptied; closed after `use`. */
async function inEmptiedWorkbench(use: (page: Page) => Promise<void>): Promise<void> {
  const server = await startPreview();
  const context = await launch();
  try {
    const page = await context.newPage();
    await page.goto(server.url);
    const summary = page.getByTestId('library-summary');
    await expect.poll(async () => summary.textContent(), { timeout: 90_000 }).toMatch(/112 parts in 14 folders/);
    await page.getByRole('button', { name: 'Empty the library' }).click();
    await use(page);
  } finally {
    await context.close();
    await server.close();
  }
}

describe.skipIf(!available)('workbench in a real browser', () => {
  let server: Awaited<ReturnType<typeof startPreview>>;
  let context: BrowserContext;
  let page: Page;
  const errors: string[] = [];

  beforeAll(async () => {
    mkdirSync(ARTIFACTS, { recursive: true });
    server = await startPreview();
    context = await launch();
    page = await context.newPage();
    page.on('pageerror', (e) => errors.push(`pageerror: ${e.message}`));
    page.on('console', (m) => {
      if (m.type() === 'error') errors.push(`console: ${m.text()}`);
    });
    await page.goto(server.url);
  }, 60_000);

  afterAll(async () => {
    await context?.close();
    await server?.close();
  });

  it('first start shows the demo library, and lists each broken file with its reason', async () => {
    const summary = page.getByTestId('library-summary');
    await expect.poll(async () => summary.textContent(), { timeout: 60_000 }).toMatch(/112 parts in 14 folders/);
    const failures = page.getByTestId('failures');
    await expect
      .poll(async () => (await failures.textContent()) ?? '', { timeout: 10_000 })
      .toContain('upload-cut-short.stl');
    const text = (await failures.textContent()) ?? '';
    expect(text).toMatch(/empty-export\.stl: the file is empty/);
    expect(text).toMatch(/bad-coordinates\.obj: vertex 2 has a non-finite coordinate/);
    expect(text).toMatch(/quote-saved-as-stl\.stl: not an STL file/);
    expect(text).toMatch(/upload-cut-short\.stl: binary STL header declares \d+ triangles/);
    expect(text).toMatch(/missing-vertices\.off: face 1 refers to vertex 9/);
    await expect
      .poll(async () => page.locator('sk-library-panel').locator('img').count(), { timeout: 60_000 })
      .toBeGreaterThan(100);
    await page.screenshot({ path: `${ARTIFACTS}/library.png` });
  }, 120_000);

  it('the augmentation preview shows the original and two views with the distance moved', async () => {
    await page.getByRole('tab', { name: 'Augmentations' }).click();
    const numbers = page.getByTestId('augment-distances');
    await expect
      .poll(async () => (await numbers.textContent()) ?? '', { timeout: 10_000 })
      .toMatch(/view A: Chamfer \d/);
    const before = await numbers.textContent();
    await page.getByRole('button', { name: 'Roll new views' }).click();
    await expect.poll(async () => numbers.textContent()).not.toBe(before);
    await page.screenshot({ path: `${ARTIFACTS}/augment.png` });
  }, 60_000);

  it('trains a few steps in the worker with progress and a falling loss, and the page never blocks for 50 ms of its own work', async () => {
    await page.getByRole('tab', { name: 'Training' }).click();
    // The demo's meshes are all closed, so the library's default inputs keep the normals, and say why.
    expect(await page.getByLabel('per-point inputs').inputValue()).toBe('xyz+normal');
    expect(await page.getByLabel('neighbour layer').inputValue()).toBe('32'); // the EdgeConv default
    // Closed meshes read with normals keep τ = 0.1 (0.07 is for libraries read as x y z; defaults.ts).
    expect(await page.locator('sk-train-panel #temp').inputValue()).toBe('0.1');
    await page
      .getByText(/Default inputs for this library: x y z \+ normal: 112 of 112 meshes are closed/)
      .waitFor({ timeout: 10_000 });
    // A third of the demo was exported turned, so it keeps the principal-axes pose, and says why.
    expect(await page.locator('sk-train-panel #pose').inputValue()).toBe('principal-axes');
    await page
      .getByText(/Default pose: principal axes: only 74 of 112 parts sit square in their files' axes/)
      .waitFor({ timeout: 10_000 });
    await page.locator('sk-train-panel #epochs').fill('3');
    await page.locator('sk-train-panel #epochs').dispatchEvent('change');
    // Before Start: an estimate from one step timed in the worker with these settings (3 epochs × 3 steps).
    await expect
      .poll(async () => page.getByTestId('train-estimate').textContent(), { timeout: 60_000 })
      .toMatch(/Estimated training time: about \d+ (min \d+ )?s \(one step timed on this machine: \d+ ms\)/);
    // From Start to the end: each task on the page, with the CPU time the page's thread spent in it.
    // (The settings above are typed in by the test driver, whose own checks run on the page's thread.)
    await watchLongTasks(page);
    const stopTrace = await tracePageTasks(page);
    await page.getByRole('button', { name: 'Start training' }).click();
    const stats = page.getByTestId('train-stats');
    await expect
      .poll(async () => (await stats.textContent()) ?? '', { timeout: 120_000 })
      .toMatch(/step [2-9] of 9 · loss \d/);
    expect((await stats.textContent()) ?? '').toMatch(/parts\/s .* left/);
    await page.screenshot({ path: `${ARTIFACTS}/training.png` });
    await expect.poll(async () => (await stats.textContent()) ?? '', { timeout: 120_000 }).toMatch(/finished · step/);
    const losses = await page.evaluate(() =>
      (
        document.querySelector('sk-app') as unknown as { state: { training: { history: { loss: number }[] } } }
      ).state.training.history.map((h) => h.loss),
    );
    expect(losses.length).toBe(9);
    expect((losses[7] + losses[8]) / 2).toBeLessThan((losses[0] + losses[1]) / 2);
    const tasks = await longTasks(page); // before the trace ends: its flush is a task of its own on the page
    const own = await stopTrace();
    console.log(
      `training: long tasks ${JSON.stringify(tasks.map(Math.round))}; tasks wall/CPU ms, longest ${longest(own).join(' ')}, most CPU ${mostCpu(own).join(' ')} of ${own.length}`,
    );
    // The page's own work: no task runs the page's thread for 50 ms (the goal), whatever the machine's load.
    expect(own.length).toBeGreaterThan(100);
    expect(Math.max(...own.map((t) => t.cpuMs))).toBeLessThan(50);
    // Wall time (the Long Tasks API) also counts the page waiting for a core while the training worker runs: on this
    // 2-core machine with one core taken by another job, tasks of 10 ms CPU took up to 40 ms, and the tab switch
    // and the driver typing the settings (before this window) 82–100 ms. Idle: no long task in most runs. Earlier:
    // 55 tasks of 60–206 ms before thumbnails moved to their worker. The bound leaves room for a loaded machine.
    expect(Math.max(0, ...tasks)).toBeLessThan(100);
  }, 240_000);

  it('a search returns ranked results with scores', async () => {
    await page.getByRole('tab', { name: 'Look-alikes' }).click();
    const results = page.getByTestId('search-results').locator('li button');
    await expect.poll(async () => results.count(), { timeout: 60_000 }).toBe(10);
    // The order defaults to "through the library"; a 9-step model's embedding is still too concentrated for it
    // (mean pair cosine 0.37 in the same run from the command line), so the page says so and orders by cosine:
    // the scores fall rank by rank.
    const order = page.locator('sk-search-panel select[aria-label="Result order"]');
    expect(await order.inputValue()).toBe('diffusion');
    await page.getByTestId('order-note').waitFor({ timeout: 10_000 });
    const scores = (await page.getByTestId('search-results').locator('.score').allTextContents()).map(Number);
    expect(scores.length).toBe(10);
    for (let i = 1; i < scores.length; i++) expect(scores[i]).toBeLessThanOrEqual(scores[i - 1]);
    // Beside each, its standing in the library; ordered by similarity, the standings fall with the scores.
    const standings = (await page.getByTestId('search-results').locator('.standing').allTextContents()).map((t) =>
      Number(/^closer than (\d+(?:\.\d)?) % of the library$/.exec(t.trim())![1]),
    );
    expect(standings.length).toBe(10);
    for (let i = 1; i < standings.length; i++) expect(standings[i]).toBeLessThanOrEqual(standings[i - 1]);
    expect(standings[0]).toBeGreaterThan(90);
    await order.selectOption('cosine');
    await expect.poll(async () => page.getByTestId('order-note').count(), { timeout: 10_000 }).toBe(0);
    expect(await page.getByText(/qualified person/).count()).toBeGreaterThan(0);
    await page.screenshot({ path: `${ARTIFACTS}/search.png` });
    // The views are drawn in the view worker; dragging one turns both (linked cameras).
    const views = page.locator('sk-search-panel sk-viewer');
    const [a0, b0] = [await views.nth(0).screenshot(), await views.nth(1).screenshot()];
    const box = (await views.nth(0).boundingBox())!;
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width / 2 + 120, box.y + box.height / 2 + 30, { steps: 8 });
    await page.mouse.up();
    await expect.poll(async () => (await views.nth(0).screenshot()).equals(a0), { timeout: 5_000 }).toBe(false);
    await expect.poll(async () => (await views.nth(1).screenshot()).equals(b0), { timeout: 5_000 }).toBe(false);
    // Why this match: the views switch to the sampled points, weighted by their share of the similarity.
    await page.getByTestId('why-toggle').check();
    const why = () =>
      page.evaluate(() => {
        const app = document.querySelector('sk-app') as unknown as {
          state: { search: { explanation: { a: Float32Array; b: Float32Array } | null } };
          shadowRoot: ShadowRoot;
        };
        const panel = app.shadowRoot.querySelector('sk-search-panel') as unknown as {
          objects: { query: { type: string } | null };
        };
        const e = app.state.search.explanation;
        if (!e) return null;
        const carrying = Array.from(e.a).filter((v) => v > 0).length;
        return {
          carrying,
          points: e.a.length,
          sum: Array.from(e.a).reduce((s, v) => s + v, 0),
          view: panel.objects.query?.type,
        };
      });
    await expect.poll(async () => (await why())?.view, { timeout: 30_000 }).toBe('Points');
    const w = (await why())!;
    expect(w.carrying).toBeGreaterThan(0);
    expect(w.carrying).toBeLessThan(w.points); // only critical points carry weight
    expect(w.sum).toBeGreaterThan(0);
    await page.screenshot({ path: `${ARTIFACTS}/search-why.png` });
    await page.getByTestId('why-toggle').uncheck();
    // Side by side means the same way round: both parts turned into their principal axes, unless asked otherwise.
    const turned = () =>
      page.evaluate(() => {
        const app = document.querySelector('sk-app') as unknown as { shadowRoot: ShadowRoot };
        const panel = app.shadowRoot.querySelector('sk-search-panel') as unknown as {
          objects: { query: { quaternion: { w: number } } | null; result: { quaternion: { w: number } } | null };
        };
        return [panel.objects.query, panel.objects.result].map((o) => Math.abs(o?.quaternion.w ?? 1) < 0.9999);
      });
    expect(await turned()).toContain(true); // a part already square in its principal axes needs no turn
    await page.getByTestId('own-axes').check();
    await expect.poll(turned, { timeout: 5_000 }).toEqual([false, false]);
    await page.getByTestId('own-axes').uncheck();
    // The ordering through the library is built in the training worker (tfjs matrix products) and handed over as
    // arrays: the same neighbours as the index finds on the page with its JS scan.
    const ordering = await page.evaluate(async () => {
      type Table = { size: number; row(i: number): { index: number; score: number }[] };
      const app = document.querySelector('sk-app') as unknown as {
        state: {
          search: {
            index: {
              vectors: Float32Array;
              dim: number;
              entries: { diagonal: number }[];
              neighbourTable(): Table;
            };
          };
          library: { parts: { name: string }[] };
        };
        search: {
          training: {
            client: {
              order(
                n: string[],
                v: Float32Array,
                d: number,
                s: Float64Array,
                k: null,
              ): Promise<{ table: { width: number; index: Int32Array; length: Int32Array } }>;
            };
          };
        };
      };
      const index = app.state.search.index;
      const names = app.state.library.parts.map((p) => p.name);
      const diagonals = Float64Array.from(index.entries, (e) => e.diagonal);
      const o = await app.search.training.client.order(names, index.vectors, index.dim, diagonals, null);
      const here = index.neighbourTable();
      let agree = 0;
      for (let i = 0; i < here.size; i++) {
        const mine = here
          .row(i)
          .slice(0, 10)
          .map((h) => h.index)
          .join();
        const theirs = Array.from(o.table.index.subarray(i * o.table.width, i * o.table.width + 10)).join();
        if (mine === theirs) agree++;
      }
      return { rows: here.size, agree, width: o.table.width, full: o.table.length[0] };
    });
    expect(ordering.rows).toBeGreaterThan(100);
    expect(ordering.width).toBe(64);
    expect(ordering.full).toBe(64);
    // float32 products and the JS scan may order a near-tie differently; nearly every row must agree exactly
    expect(ordering.agree).toBeGreaterThanOrEqual(ordering.rows - 2);
    // A new file, not in the library, as the query.
    await page.locator('sk-search-panel input[type=file]').setInputFiles('demo-shapes/spur-gear/BC06-311C.obj');
    await expect
      .poll(async () => page.locator('sk-search-panel input[aria-label="Query part"]').inputValue(), {
        timeout: 30_000,
      })
      .toMatch(/BC06-311C\.obj \(dropped file\)/);
    await expect.poll(async () => results.count(), { timeout: 30_000 }).toBe(10);
  }, 120_000);

  it('the map shows every part, and the quality panel measures the model against the baselines', async () => {
    await watchLongTasks(page);
    await page.getByRole('tab', { name: 'Map' }).click();
    await expect
      .poll(async () => page.locator('sk-map-panel').locator('path.dot').count(), { timeout: 30_000 })
      .toBe(112);
    // The projection is worked out in the map worker, not on the page (there it took 68–90 ms on the demo).
    const mapTasks = await longTasks(page);
    console.log(`map first visit: long tasks ${JSON.stringify(mapTasks.map(Math.round))}`);
    expect(Math.max(0, ...mapTasks)).toBeLessThan(100);
    await page.screenshot({ path: `${ARTIFACTS}/map.png` });
    await page.getByRole('tab', { name: 'Quality' }).click();
    // Before starting: how long each job should take, from the library's last embedding here (after training).
    expect(await page.getByTestId('measure-estimate').textContent()).toMatch(
      /Estimated: measuring about (\d+ min )?\d+ s, the study about (\d+ h )?(\d+ min )?(\d+ s)? ?\(at this library's last embedding pace, \d+\.\d parts\/s\)/,
    );
    await page.getByRole('button', { name: 'Measure retrieval quality' }).click();
    const table = page.getByTestId('metrics-table');
    await expect
      .poll(async () => ((await table.count()) ? table.locator('tr').count() : 0), { timeout: 120_000 })
      .toBe(7);
    expect(await table.textContent()).toMatch(
      /learned.*learned, ordered through the library.*untrained.*d2.*d2, ordered through the library/s,
    );
    await page.screenshot({ path: `${ARTIFACTS}/quality.png` });
    // The augmentation study can be cancelled: it stops, says nothing failed, and the table measured before stays.
    await page.getByRole('button', { name: 'Run the augmentation study' }).click();
    const cancel = page.getByTestId('cancel-measure');
    await cancel.waitFor({ timeout: 30_000 });
    await cancel.click();
    await expect
      .poll(async () => page.getByRole('button', { name: 'Run the augmentation study' }).isEnabled(), {
        timeout: 10_000,
      })
      .toBe(true);
    expect(await page.locator('sk-study-panel [role=alert]').count()).toBe(0);
    expect(await table.locator('tr').count()).toBe(7);
    // and the worker it ended is replaced: a file from outside the library is still embedded and searched with.
    await page.getByRole('tab', { name: 'Look-alikes' }).click();
    await page.locator('sk-search-panel input[type=file]').setInputFiles('demo-shapes/hex-nut/BC04-224B.stl');
    await expect
      .poll(async () => page.locator('sk-search-panel input[aria-label="Query part"]').inputValue(), {
        timeout: 60_000,
      })
      .toMatch(/BC04-224B\.stl \(dropped file\)/);
    await expect
      .poll(async () => page.getByTestId('search-results').locator('li').count(), { timeout: 60_000 })
      .toBe(10);
  }, 180_000);

  it('the augmentation study shares its views with the second worker and gives the rows one worker gives', async () => {
    await page.getByRole('tab', { name: 'Quality' }).click();
    type Measure = { studyKinds: string[] | null; studyOnTwoWorkers: boolean; lastStudyShared: number };
    type Row = { augmentation: string; strength: number; method: string; instance_top1: number; queries: number };
    const run = async (twoWorkers: boolean) => {
      await page.evaluate((two) => {
        const m = (document.querySelector('sk-app') as unknown as { measure: Measure }).measure;
        m.studyKinds = ['jitter']; // one augmentation at the workbench's three strengths: seconds, not minutes
        m.studyOnTwoWorkers = two;
      }, twoWorkers);
      await watchLongTasks(page);
      const started = Date.now();
      await page.getByRole('button', { name: 'Run the augmentation study' }).click();
      const state = () =>
        page.evaluate(() => {
          const app = document.querySelector('sk-app') as unknown as {
            state: { measure: { study: { kind: string }; rows: Row[] } };
            measure: Measure;
          };
          return {
            kind: app.state.measure.study.kind,
            rows: app.state.measure.rows,
            shared: app.measure.lastStudyShared,
          };
        });
      await expect.poll(async () => (await state()).kind, { timeout: 180_000 }).toBe('done');
      const seconds = (Date.now() - started) / 1000;
      return { ...(await state()), seconds, tasks: await longTasks(page) };
    };
    const two = await run(true);
    const one = await run(false);
    console.log(
      `study of one augmentation: two workers ${two.seconds.toFixed(1)} s (the second embedded ${two.shared} parts), ` +
        `one ${one.seconds.toFixed(1)} s; long tasks ${JSON.stringify(two.tasks.map(Math.round))} / ${JSON.stringify(one.tasks.map(Math.round))}`,
    );
    // jitter at 0, 0.5 and 1, by the learned and untrained encoders and D2, all 112 parts looked up
    expect(two.rows.map((r) => `${r.augmentation} ${r.strength} ${r.method} ${r.queries}`)).toEqual(
      [0, 0.5, 1].flatMap((s) => ['learned', 'untrained', 'd2'].map((m) => `jitter ${s} ${m} 112`)),
    );
    // An unchanged view is the part itself: every method finds it first.
    expect(two.rows.filter((r) => r.strength === 0).map((r) => r.instance_top1)).toEqual([1, 1, 1]);
    // Two of the four batches of every set went to the second worker: the library and three sets of views
    // (strength 0 is the library itself, measured once), each by both encoders. The figures are one worker's, exactly.
    expect([two.shared, one.shared]).toEqual([4 * 2 * 64, 0]);
    expect(two.rows).toEqual(one.rows);
    expect(Math.max(0, ...two.tasks, ...one.tasks)).toBeLessThan(100);
  }, 400_000);

  it("a folder's units turn its parts' sizes into millimetres, on the cards and in the look-alike list", async () => {
    await page.getByRole('tab', { name: 'Parts library' }).click();
    const panel = page.locator('sk-library-panel');
    const card = panel.locator('.card[title^="washer/"]').first();
    const size = (t: string | null) => (t ?? '').match(/([\d.]+) × ([\d.]+) × ([\d.]+) (mm|file units)/)!;
    const before = size(await card.textContent());
    expect(before[4]).toBe('file units');
    // The ordering through the library holds each part's size (its size prior): built here now, it is built again,
    // in the worker, with the washers' new sizes once their units are said.
    const prior = () =>
      page.evaluate(() => {
        const app = document.querySelector('sk-app') as unknown as {
          state: {
            library: { parts: { name: string }[] };
            search: { index: { ordered: boolean; neighbourTable(): unknown; sizePrior(): { logSize: Float32Array } } };
          };
        };
        const { index } = app.state.search;
        const i = app.state.library.parts.findIndex((p) => p.name.startsWith('washer/'));
        return { ordered: index.ordered, washer: index.ordered ? index.sizePrior().logSize[i] : null };
      });
    await page.evaluate(() => {
      const app = document.querySelector('sk-app') as unknown as {
        state: { search: { index: { neighbourTable(): unknown } } };
      };
      app.state.search.index.neighbourTable();
    });
    const ordered = await prior();
    expect(ordered.ordered).toBe(true);
    // The ordering is built in a worker of its own, ended once it has answered (its WebAssembly memory, grown by
    // the build, goes with it: at 20,000 parts the training worker kept about 230 MB of it before).
    const models = { started: 0, ended: 0 };
    const watchModelWorkers = (w: Worker) => {
      if (!w.url().includes('train.worker')) return;
      models.started++;
      w.on('close', () => models.ended++);
    };
    page.on('worker', watchModelWorkers);
    await panel.getByTestId('units').locator('summary').click();
    await panel.getByLabel('Units of washer').selectOption('inch');
    await expect.poll(async () => size(await card.textContent())[4]).toBe('mm');
    const after = size(await card.textContent());
    // 1 in = 25.4 mm (NIST SP 811); the cards round to 3–4 digits.
    for (const i of [1, 2, 3]) expect(Number(after[i]) / Number(before[i])).toBeCloseTo(25.4, 0);
    await expect.poll(async () => (await prior()).ordered, { timeout: 30_000 }).toBe(true);
    expect((await prior()).washer! - ordered.washer!).toBeCloseTo(Math.log(25.4), 5);
    await expect.poll(() => models.ended, { timeout: 10_000 }).toBe(1);
    expect(models.started).toBe(1);
    page.off('worker', watchModelWorkers);
    await page.screenshot({ path: `${ARTIFACTS}/units.png` });
    // Back to Look-alikes, seen before: its 3-D views are drawn in the view worker on kept canvases, so the switch
    // holds the page briefly (measured: no task over 50 ms; 100–250 ms tasks when each view made its own WebGL
    // context and compiled its shaders on the page).
    await watchLongTasks(page);
    await page.getByRole('tab', { name: 'Look-alikes' }).click();
    await page.locator('sk-search-panel sk-viewer canvas').first().waitFor({ timeout: 10_000 });
    await page.waitForTimeout(1_000);
    const switching = await longTasks(page);
    console.log(`back to Look-alikes: long tasks ${JSON.stringify(switching.map(Math.round))}`);
    expect(Math.max(0, ...switching)).toBeLessThan(100);
    // The query box: a part's name typed (or picked from the names it offers) starts the search.
    const queryBox = page.locator('sk-search-panel input[aria-label="Query part"]');
    await queryBox.fill('BC01-100');
    expect(await page.locator('sk-search-panel datalist option').count()).toBeGreaterThan(0);
    await queryBox.fill('washer/BC01-100A.stl');
    await queryBox.press('Enter');
    await expect.poll(async () => queryBox.inputValue(), { timeout: 10_000 }).toBe('washer/BC01-100A.stl');
    const folder = page.locator('sk-search-panel select[aria-label="Folder filter"]');
    await folder.selectOption('washer');
    const listed = async () => (await page.getByTestId('search-results').textContent()) ?? '';
    await expect.poll(listed, { timeout: 60_000 }).toMatch(/ mm · size ×/);
    expect(await listed()).not.toMatch(/file units/);
    await folder.selectOption('');
    await page.getByRole('tab', { name: 'Parts library' }).click();
  }, 60_000);

  it('a reload keeps the library and the trained model', async () => {
    await page.reload();
    await expect
      .poll(async () => page.getByTestId('library-summary').textContent(), { timeout: 60_000 })
      .toMatch(/112 parts in 14 folders/);
    await expect
      .poll(async () => page.getByTestId('model-status').textContent(), { timeout: 60_000 })
      .toMatch(/model: trained \(9 steps\)/);
    // Thumbnails come back with the library instead of being drawn again.
    await expect
      .poll(async () => page.locator('sk-library-panel img').count(), { timeout: 5_000 })
      .toBeGreaterThanOrEqual(100);
    // The banner says the same as the header, and nothing claims to be running.
    expect(await page.locator('sk-app .notice').textContent()).toMatch(/Restored the saved model \(9 training steps\)/);
    // and the folder's units, set before the reload.
    expect(await page.locator('sk-library-panel').getByLabel('Units of washer').inputValue()).toBe('inch');
    await page.getByRole('tab', { name: 'Training' }).click();
    expect(await page.getByTestId('train-stats').textContent()).toMatch(/no training running/);
    // Look-alikes answer from the kept embeddings and model.
    await page.getByRole('tab', { name: 'Look-alikes' }).click();
    await expect
      .poll(async () => page.getByTestId('search-results').locator('li button').count(), { timeout: 60_000 })
      .toBe(10);
    // The restored parts came without their meshes and point clouds: the views fetched the shown ones back from
    // the database, and the page holds no other part's mesh or cloud.
    const meshes = () =>
      page.evaluate(() => {
        const app = document.querySelector('sk-app') as unknown as {
          state: { library: { meshesFetched: number; parts: { meshIndices: Uint32Array; points: Float32Array }[] } };
        };
        const lib = app.state.library;
        return {
          fetched: lib.meshesFetched,
          held: lib.parts.filter((p) => p.meshIndices.length > 0).length,
          clouds: lib.parts.filter((p) => p.points.length > 0).length,
        };
      });
    await expect.poll(async () => (await meshes()).fetched, { timeout: 10_000 }).toBeGreaterThanOrEqual(2);
    expect((await meshes()).held).toBe(0);
    expect((await meshes()).clouds).toBe(0);
    expect(await page.locator('sk-app .notice').textContent()).not.toMatch(/could not be read back/);
    // The augmentation preview fetches its part's cloud too.
    await page.getByRole('tab', { name: 'Augmentations' }).click();
    await expect
      .poll(async () => (await page.getByTestId('augment-distances').textContent()) ?? '', { timeout: 10_000 })
      .toMatch(/Chamfer \d/);
    await page.getByRole('tab', { name: 'Parts library' }).click();
  }, 120_000);

  it('the library saved as a file opens again whole, with its model (the parts database dumped and restored)', async () => {
    const summary = async () => (await page.getByTestId('library-summary').textContent()) ?? '';
    const [file] = await Promise.all([
      page.waitForEvent('download', { timeout: 60_000 }),
      page.getByRole('button', { name: 'Save the library as a file' }).click(),
    ]);
    const path = join(scratchDir('shapekin-dump-'), file.suggestedFilename());
    await file.saveAs(path);
    expect(path).toMatch(/shapekin-library-.*\.tar\.gz$/);
    expect(statSync(path).size).toBeGreaterThan(1_000_000);
    await page.getByRole('button', { name: 'Empty the library' }).click();
    await expect.poll(summary, { timeout: 10_000 }).toMatch(/^\s*0 parts/);
    await page.locator('sk-library-panel input[type=file][accept=".gz,.tgz,.tar"]').setInputFiles(path);
    await expect.poll(summary, { timeout: 90_000 }).toMatch(/112 parts in 14 folders/);
    await expect
      .poll(async () => page.getByTestId('model-status').textContent(), { timeout: 60_000 })
      .toMatch(/model: trained \(9 steps\)/);
  }, 180_000);

  it('broken files dropped into the page get a reason each, a reader that runs too long is stopped, and the page stays responsive', async () => {
    await watchLongTasks(page);
    await page.evaluate(() => {
      // A short time limit, so that reading a large file (well over a second here) outlasts it.
      (document.querySelector('sk-app') as unknown as { library: { timeLimits: unknown } }).library.timeLimits = {
        baseMs: 150,
        perMiBMs: 0,
      };
    });
    await page.getByRole('tab', { name: 'Parts library' }).click();
    // Files on disk, handed to the page by path (a large in-memory buffer would be built by page script).
    const dir = scratchDir('shapekin-broken-');
    const file = (name: string, text: string) => {
      writeFileSync(join(dir, name), text);
      return join(dir, name);
    };
    const vertices = 'ply\nformat ascii 1.0\nelement vertex 3\nproperty float x\nproperty float y\nproperty float z\n';
    await page
      .locator('sk-library-panel input[type=file][multiple]')
      .setInputFiles([
        file('junk-count.ply', `${vertices}element junk 9007199254740991\nend_header\n0 0 0\n1 0 0\n0 1 0\n`),
        file('cut-short.ply', `${vertices}end_header\n0 0 0\n1 0 0\n`),
        file('lying-counts.off', 'OFF\n6 1 0\n0 0 0\n1 0 0\n0 1 0\n3 0 1 2\n'),
        file('typo.xyz', '1 2 3a\n4 5 6\n7 8 9\n'),
        file('slow.obj', 'v 0 0 0\nv 1 0 0\nv 0 1 0\n' + 'f 1 2 3\n'.repeat(2_500_000)),
      ]);
    const failures = page.getByTestId('failures');
    await expect.poll(async () => (await failures.textContent()) ?? '', { timeout: 60_000 }).toContain('slow.obj');
    await page.screenshot({ path: `${ARTIFACTS}/broken-files.png` });
    const text = ((await failures.textContent()) ?? '').replace(/\s+/g, ' ');
    expect(text).toMatch(
      /junk-count\.ply: PLY header: element "junk" declares 9007199254740991 entries but no properties/,
    );
    expect(text).toMatch(/cut-short\.ply: PLY header declares 3 entries .* but the body has 2 lines/);
    expect(text).toMatch(/lying-counts\.off: OFF header declares 6 vertices but the file ends after 4/);
    expect(text).toMatch(/typo\.xyz: line 1 is not a point/);
    expect(text).toMatch(/slow\.obj: reading took longer than 0\.\d s and was stopped/);
    // The library itself is untouched and the page answered throughout.
    await expect
      .poll(async () => page.getByTestId('library-summary').textContent(), { timeout: 10_000 })
      .toMatch(/112 parts in 14 folders/);
    const tasks = await longTasks(page);
    console.log(`broken files dropped: long tasks ${JSON.stringify(tasks.map(Math.round))}`);
    // No reader runs on the page. What remains are the page's own steps after an import (saving the library,
    // handing parts to the training worker): 50–240 ms measured here before they were sliced, 54–77 ms after.
    expect(Math.max(0, ...tasks)).toBeLessThan(250);
  }, 120_000);

  it('STEP and VRML files import in the page, STEP sizes in millimetres (KiCad models, test/fixtures/kicad)', async () => {
    await page.evaluate(() => {
      (document.querySelector('sk-app') as unknown as { library: { timeLimits: unknown } }).library.timeLimits = {
        baseMs: 30_000,
        perMiBMs: 2_000,
      };
    });
    await page
      .locator('sk-library-panel input[type=file][multiple]')
      .setInputFiles([
        'test/fixtures/kicad/Battery_CR1225.step',
        'test/fixtures/kicad/Battery_CR1225.wrl',
        'test/fixtures/kicad/TO-92Mini-2.step',
      ]);
    await expect
      .poll(async () => page.getByTestId('library-summary').textContent(), { timeout: 60_000 })
      .toMatch(/115 parts in 15 folders/);
    const card = page.locator('sk-library-panel button.card', { hasText: 'Battery_CR1225.step' });
    expect(await card.textContent()).toMatch(/12\.5 × 12\.5 × 2\.50 mm/);
    expect(await page.locator('sk-library-panel button.card', { hasText: 'Battery_CR1225.wrl' }).textContent()).toMatch(
      /4\.92 × 4\.92 × 0\.98 file units/,
    );
    await page.getByPlaceholder('Filter by name or folder').fill('Battery');
    await page.screenshot({ path: `${ARTIFACTS}/cad-import.png` });
    await page.getByPlaceholder('Filter by name or folder').fill('');
  }, 120_000);

  it("the library's embedding shows its progress and can be stopped; nothing half is kept, and it starts again on request", async () => {
    // One more part: the library changed, so it is embedded again with the current model.
    await page
      .locator('sk-library-panel input[type=file][multiple]')
      .setInputFiles(['test/fixtures/kicad/TO-92Mini-2.wrl']);
    await page.getByRole('tab', { name: 'Look-alikes' }).click();
    const progress = page.getByTestId('embed-progress');
    await expect
      .poll(async () => ((await progress.count()) ? progress.textContent() : ''), { timeout: 60_000, interval: 100 })
      .toMatch(/Embedding the library with the current model: \d+ of 116 parts/);
    await page.getByRole('button', { name: 'Stop embedding' }).click();
    await page.getByText(/Embedding was stopped, and nothing of it was kept/).waitFor({ timeout: 10_000 });
    expect(await page.getByTestId('search-results').locator('li button').count()).toBe(0);
    await page.getByRole('button', { name: 'Embed the library' }).click();
    await expect
      .poll(async () => page.getByTestId('search-results').locator('li button').count(), { timeout: 120_000 })
      .toBe(10);
    expect(await progress.count()).toBe(0);
  }, 180_000);

  it('a reload in the middle of training offers to continue, and continuing goes on from the saved step', async () => {
    await page.getByRole('tab', { name: 'Training' }).click();
    await page.locator('sk-train-panel #epochs').fill('20');
    await page.locator('sk-train-panel #epochs').dispatchEvent('change');
    await page.getByRole('button', { name: 'Start training' }).click();
    const header = page.getByTestId('model-status');
    // The worker sends a checkpoint after the first step; once the parts database has kept it (its fingerprint is
    // known), reload.
    await expect
      .poll(
        async () =>
          page.evaluate(() => {
            const app = document.querySelector('sk-app') as unknown as {
              state: {
                training: {
                  model: { manifest: { status: string; step: number } } | null;
                  modelFingerprint: string | null;
                };
              };
            };
            const m = app.state.training.model?.manifest;
            return m && m.status === 'running' && app.state.training.modelFingerprint ? m.step : 0;
          }),
        { timeout: 60_000 },
      )
      .toBeGreaterThanOrEqual(1);
    await page.reload();
    const notice = page.locator('sk-app .notice');
    await expect
      .poll(async () => ((await notice.count()) ? notice.textContent() : ''), { timeout: 60_000 })
      .toMatch(/training stopped at step (\d+) of \d+/);
    const saved = Number((await notice.textContent())!.match(/step (\d+) of/)![1]);
    expect(saved).toBeGreaterThanOrEqual(1);
    await page.getByTestId('continue-now').click();
    await expect
      .poll(async () => Number((await header.textContent())?.match(/training: step (\d+) of/)?.[1] ?? 0), {
        timeout: 60_000,
      })
      .toBeGreaterThan(saved);
    expect(await notice.count()).toBe(0); // the offer is gone once it is taken
    await page.getByRole('tab', { name: 'Training' }).click();
    await page.getByRole('button', { name: 'Stop' }).click();
    await expect
      .poll(async () => page.getByTestId('train-stats').textContent(), { timeout: 60_000 })
      .toMatch(/stopped/);
  }, 240_000);

  it('reading a library can be stopped, and what was read before stays', async () => {
    await page.getByRole('tab', { name: 'Parts library' }).click();
    await page.getByRole('button', { name: 'Reload the demo library' }).click();
    const stop = page.getByTestId('cancel-import');
    await stop.waitFor({ timeout: 30_000 });
    await stop.click();
    await page
      .getByText(/Reading was stopped: the parts read before it are in the library/)
      .waitFor({ timeout: 10_000 });
    const summary = (await page.getByTestId('library-summary').textContent()) ?? '';
    const count = Number(summary.match(/(\d+) parts/)?.[1] ?? -1);
    expect(count).toBeGreaterThanOrEqual(0);
    expect(count).toBeLessThan(112);
    // A new import after a stop runs to the end.
    await page.getByRole('button', { name: 'Reload the demo library' }).click();
    await expect
      .poll(async () => page.getByTestId('library-summary').textContent(), { timeout: 60_000 })
      .toMatch(/112 parts in 14 folders/);
  }, 120_000);

  it('shows no page errors or console errors', () => {
    expect(errors).toEqual([]);
  });
});

describe.skipIf(!available)('a library of a few hundred parts', () => {
  it('is read on the import workers, embedded on two workers and searched, and the page stays responsive', async () => {
    // 336 generated parts (three generator seeds; OFF and binary STL), written where the folder picker can take them.
    const dir = generatedFolder('shapekin-e2e-lib-', [1, 2, 3], ['off', 'stl-binary']);
    await inEmptiedWorkbench(async (page) => {
      const summary = page.getByTestId('library-summary');
      // From when the files are handed over: the browser's own listing of the folder (about 150 ms for 336 files
      // in this headless Chromium, native work before any of ours) is not the workbench's.
      await page.locator('sk-library-panel input[webkitdirectory]').setInputFiles(dir);
      await watchLongTasks(page);
      await expect.poll(async () => summary.textContent(), { timeout: 120_000 }).toMatch(/336 parts in 14 folders/);
      const reading = await longTasks(page);
      await watchLongTasks(page);
      const stopTrace = await tracePageTasks(page);
      await page.getByRole('tab', { name: 'Look-alikes' }).click();
      await expect
        .poll(async () => page.getByTestId('search-results').locator('li button').count(), { timeout: 300_000 })
        .toBe(10);
      const searching = await longTasks(page); // before the trace ends (its flush is a task of its own)
      const own = await stopTrace();
      console.log(
        `336 parts: long tasks reading ${JSON.stringify(reading.map(Math.round))}, searching ${JSON.stringify(searching.map(Math.round))}; searching, tasks wall/CPU ms, longest ${longest(own).join(' ')}, most CPU ${mostCpu(own).join(' ')} of ${own.length}`,
      );
      // The page's own work while the library is embedded, ordered and searched: no task over 50 ms of its thread.
      expect(own.length).toBeGreaterThan(100);
      expect(Math.max(...own.map((t) => t.cpuMs))).toBeLessThan(50);
      // Searching, measured here: 50–135 ms before the page's steps were cut into tasks of their own (pace.ts), in
      // CI up to 173 ms; after, none in most runs, one of 68 ms in some. A task's wall time here is 2–5× its CPU
      // time: two embedding workers, the thumbnail worker and the software GL share the machine's two cores with
      // the page. Goal 50 ms; the bound leaves room for a slower, loaded machine.
      expect(Math.max(0, ...reading)).toBeLessThan(100);
      expect(Math.max(0, ...searching)).toBeLessThan(150);
      await page.screenshot({ path: `${ARTIFACTS}/few-hundred.png` });
    });
  }, 420_000);
});

describe.skipIf(!available)('a reload before an import has ended', () => {
  it('keeps the parts read and written before it, and only those', async () => {
    // 1,344 generated parts (twelve generator seeds, OFF), enough for several seconds of reading.
    const seeds = Array.from({ length: 12 }, (_, i) => 10 + i);
    const dir = generatedFolder('shapekin-e2e-reload-', seeds, ['off']);
    const total = seeds.length * 112;
    await inEmptiedWorkbench(async (page) => {
      const summary = page.getByTestId('library-summary');
      await page.locator('sk-library-panel input[webkitdirectory]').setInputFiles(dir);
      // Reload 6.5 s after the first part is read (the list of parts written is kept every 3 s, LIST_EVERY_MS),
      // before the import ends: here reading takes about 6 s and writing the parts about 25 s more.
      const progress = page.locator('sk-library-panel progress');
      await expect
        .poll(async () => Number((await progress.getAttribute('value').catch(() => null)) ?? 0), { timeout: 60_000 })
        .toBeGreaterThan(0);
      await page.waitForTimeout(6500);
      const stage = (await page.getByTestId('keeping').count()) ? 'writing the parts' : 'reading';
      expect(await progress.count()).toBe(1); // the import has not ended
      await page.reload();
      await expect
        .poll(
          async () => (await progress.count()) === 0 && /[1-9]\d* parts? in/.test((await summary.textContent()) ?? ''),
          {
            timeout: 60_000,
          },
        )
        .toBe(true);
      const kept = Number((await summary.textContent())!.match(/(\d+) parts?/)![1]);
      // Before, the list was written once all were written: the reload brought back the demo library.
      const names = await page
        .locator('sk-library-panel .card')
        .evaluateAll((cards) => cards.map((c) => c.getAttribute('title') ?? ''));
      console.log(`reload 6.5 s after the first part was read (${stage}): ${kept} of ${total} parts kept`);
      // Measured: 332 and 111 kept; with the parts written only once reading had ended, 10 (and before that fix,
      // the demo library came back).
      expect(kept).toBeGreaterThanOrEqual(30);
      expect(kept).toBeLessThan(total);
      expect(names.length).toBeGreaterThan(0);
      expect(names.every((n) => /\/s\d+-/.test(n))).toBe(true); // the import's parts, none of the demo's
    });
  }, 300_000);
});

describe.skipIf(!available)('emptying the library while an import is under way', () => {
  it('stops the import: no part of it comes back, before or after a reload', async () => {
    // Before, the import read on and refilled the emptied library (its parts were shown and kept again).
    const seeds = Array.from({ length: 6 }, (_, i) => 40 + i);
    const dir = generatedFolder('shapekin-e2e-empty-', seeds, ['off']);
    await inEmptiedWorkbench(async (page) => {
      const summary = page.getByTestId('library-summary');
      const cards = page.locator('sk-library-panel .card');
      await page.locator('sk-library-panel input[webkitdirectory]').setInputFiles(dir);
      const progress = page.locator('sk-library-panel progress');
      await expect.poll(async () => cards.count(), { timeout: 60_000 }).toBeGreaterThan(0);
      expect(await progress.count()).toBe(1); // still reading (672 parts take several seconds)
      await page.getByRole('button', { name: 'Empty the library' }).click();
      await page.waitForTimeout(4000);
      const empty = page.getByTestId('empty-library');
      expect(await cards.count()).toBe(0);
      expect(await progress.count()).toBe(0);
      expect(await empty.count()).toBe(1);
      expect(await summary.textContent()).not.toMatch(/[1-9]\d* parts? in/);
      // After a reload the kept library is opened: empty, as it was left (neither the import's parts nor the demo).
      await page.reload();
      await expect.poll(async () => empty.count(), { timeout: 60_000 }).toBe(1);
      await page.waitForTimeout(2000);
      expect(await cards.count()).toBe(0);
      expect(await summary.textContent()).not.toMatch(/[1-9]\d* parts? in/);
    });
  }, 300_000);
});

describe.skipIf(!available)('a library kept by an earlier version (plain IndexedDB records)', () => {
  it('moves into the parts database on first start, and the earlier records go (thumbnails stay)', async () => {
    const server = await startPreview();
    const context = await launch();
    try {
      const page = await context.newPage();
      // A page of the same origin that does not start the workbench, to write the records an earlier version kept.
      await page.route('**/earlier.html', (r) =>
        r.fulfill({ body: '<!doctype html><title>earlier</title>', contentType: 'text/html' }),
      );
      await page.goto(`${server.url}earlier.html`);
      await page.evaluate(async () => {
        const part = (name: string, x: number) => ({
          name,
          label: 'bracket',
          info: {
            format: 'off',
            vertexCount: 3,
            triangleCount: 1,
            degenerateSkipped: 0,
            bboxMin: [0, 0, 0],
            bboxMax: [x, 1, 0],
            extents: [x, 1, 0],
            area: x / 2,
            closed: false,
            volume: null,
            fileBytes: 60,
            bodies: null,
            units: 'file',
          },
          points: Float32Array.from({ length: 2048 * 3 }, (_, i) => Math.sin(i * x)),
          normals: new Float32Array(2048 * 3),
          centre: [x / 2, 0.5, 0],
          radius: 1,
          diagonal: Math.hypot(x, 1),
          meshPositions: Float32Array.from([0, 0, 0, x, 0, 0, 0, 1, 0]),
          meshIndices: Uint32Array.from([0, 1, 2]),
        });
        const db = await new Promise<IDBDatabase>((resolve, reject) => {
          const req = indexedDB.open('shapekin-workbench', 1);
          req.onupgradeneeded = () => req.result.createObjectStore('library');
          req.onsuccess = () => resolve(req.result);
          req.onerror = () => reject(req.error);
        });
        const t = db.transaction('library', 'readwrite');
        const s = t.objectStore('library');
        s.put(part('bracket/L-40.off', 4), 'part:bracket/L-40.off');
        s.put(part('bracket/L-60.off', 6), 'part:bracket/L-60.off');
        s.put(
          {
            names: ['bracket/L-40.off', 'bracket/L-60.off'],
            failures: [{ file: 'bracket/L-80.off', code: 'truncated', reason: 'the file ends inside face 3' }],
            source: 'user',
          },
          'current',
        );
        s.put(new Map([['bracket/L-40.off', 'data:image/png;base64,']]), 'thumbnails');
        await new Promise((resolve) => (t.oncomplete = resolve));
        db.close();
      });
      await page.goto(server.url);
      await expect
        .poll(async () => page.getByTestId('library-summary').textContent(), { timeout: 90_000 })
        .toMatch(/2 parts in 1 folder, 1 file could not be read/);
      expect(await page.getByTestId('failures').textContent()).toMatch(/L-80\.off: the file ends inside face 3/);
      const left = await page.evaluate(async () => {
        const db = await new Promise<IDBDatabase>((resolve, reject) => {
          const req = indexedDB.open('shapekin-workbench', 1);
          req.onsuccess = () => resolve(req.result);
          req.onerror = () => reject(req.error);
        });
        const keys = await new Promise<IDBValidKey[]>((resolve) => {
          const r = db.transaction('library', 'readonly').objectStore('library').getAllKeys();
          r.onsuccess = () => resolve(r.result);
        });
        db.close();
        return keys.map(String).sort();
      });
      expect(left).toContain('thumbnails'); // the earlier records go; thumbnails stay (in records of 100 once redrawn)
      expect(left.filter((k) => k !== 'thumbnails' && !/^thumbnails:\d+$/.test(k))).toEqual([]);
    } finally {
      await context.close();
      await server.close();
    }
  }, 180_000);
});
