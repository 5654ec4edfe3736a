// Developer aid: run the augmentation study in the built workbench and screenshot the Quality panel.
import { launch } from '../../test/browser/chromium';
import { startPreview } from '../../test/browser/server';
const server = await startPreview();
const ctx = await launch();
const page = await ctx.newPage();
const errors: string[] = [];
page.on('pageerror', (e) => errors.push(String(e)));
await page.goto(server.url);
await page.getByTestId('library-summary').filter({ hasText: '112 parts' }).waitFor({ timeout: 60000 });
await page.getByRole('tab', { name: 'Quality' }).click();
const t0 = Date.now();
await page.getByRole('button', { name: 'Run the augmentation study' }).click();
await page.getByTestId('study-charts').waitFor({ timeout: 900000 });
console.log('study took', (Date.now() - t0) / 1000, 's; errors', errors);
await page.screenshot({ path: '/tmp/shot-study.png', fullPage: true });
await ctx.close();
await server.close();
