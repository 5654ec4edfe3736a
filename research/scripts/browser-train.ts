// Developer aid: empty the workbench's library, add a folder of parts, train with the Training tab's defaults in
// headless Chromium and print how long the worker took; screenshots to /tmp/shot-folder-*.png. Needs the built
// workbench served (npm run build && npx vite preview --port 5173).
//   npx tsx research/scripts/browser-train.ts <folder> <part-count> [url]
import { launch } from '../../test/browser/chromium';
const [dir, count, url = 'http://localhost:5173/'] = process.argv.slice(2);
if (!dir || !count) throw new Error('usage: browser-train.ts <folder> <part-count> [url]');
const ctx = await launch();
const page = await ctx.newPage();
page.on('dialog', (d) => void d.accept());
const errors: string[] = [];
page.on('pageerror', (e) => errors.push(String(e)));
await page.goto(url);
await page.getByTestId('library-summary').filter({ hasText: '112 parts' }).waitFor({ timeout: 60000 });
await page.getByRole('button', { name: 'Empty the library' }).click();
await page.waitForTimeout(1000);
await page.locator('sk-library-panel input[webkitdirectory]').setInputFiles(dir);
await page
  .getByTestId('library-summary')
  .filter({ hasText: new RegExp(`${count} parts`) })
  .waitFor({ timeout: 300000 });
console.log((await page.getByTestId('library-summary').innerText()).replace(/\s+/g, ' ').slice(0, 200));
await page.getByRole('tab', { name: 'Training' }).click();
await page.waitForTimeout(1000);
console.log('pose select:', await page.getByLabel('pose').inputValue());
const t0 = Date.now();
await page.getByRole('button', { name: 'Start training' }).click();
await page.getByTestId('train-stats').filter({ hasText: 'finished' }).waitFor({ timeout: 1200000 });
const secs = (Date.now() - t0) / 1000;
console.log('stats:', (await page.getByTestId('train-stats').innerText()).replace(/\s+/g, ' '));
console.log(`training in the browser worker: ${Math.floor(secs / 60)} min ${Math.round(secs % 60)} s`);
await page.screenshot({ path: '/tmp/shot-folder-trained.png' });
await page.getByRole('tab', { name: 'Look-alikes' }).click();
await page
  .getByText('embedding…')
  .waitFor({ state: 'detached', timeout: 600000 })
  .catch(() => undefined);
console.log(`re-embedded the library ${((Date.now() - t0) / 1000 - secs).toFixed(0)} s after training ended`);
await page.screenshot({ path: '/tmp/shot-folder-search.png' });
console.log('errors:', errors);
await ctx.close();
