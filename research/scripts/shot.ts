// Developer aid: open the workbench in headless Chromium, walk the panels, save screenshots to /tmp.
import { launch } from '../../test/browser/chromium';
const url = process.argv[2] ?? 'http://localhost:5173/';
const ctx = await launch();
const page = await ctx.newPage();
const errors: string[] = [];
page.on('console', (m) => {
  if (m.type() === 'error') errors.push(m.text());
});
page.on('pageerror', (e) => errors.push(String(e)));
await page.goto(url);
await page.getByTestId('library-summary').filter({ hasText: '112 parts' }).waitFor({ timeout: 60000 });
await page.waitForTimeout(3000);
await page.screenshot({ path: '/tmp/shot-library.png' });
await page.getByRole('tab', { name: 'Augmentations' }).click();
await page.waitForTimeout(1000);
await page.screenshot({ path: '/tmp/shot-augment.png' });
await page.getByRole('tab', { name: 'Training' }).click();
await page.getByLabel('epochs').fill('3');
await page.getByLabel('epochs').dispatchEvent('change');
await page.getByRole('button', { name: 'Start training' }).click();
await page
  .getByTestId('train-stats')
  .filter({ hasText: /step [3-9] of 9/ })
  .waitFor({ timeout: 120000 });
await page.screenshot({ path: '/tmp/shot-train.png' });
await page.getByTestId('train-stats').filter({ hasText: 'finished' }).waitFor({ timeout: 120000 });
await page.getByRole('tab', { name: 'Look-alikes' }).click();
await page.waitForTimeout(4000);
await page.screenshot({ path: '/tmp/shot-search.png' });
console.log('errors:', errors);
await ctx.close();
