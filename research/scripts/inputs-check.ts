// Dev aid: clear the library, add some open-mesh files, and read the Training tab's default inputs.
//   npx tsx research/scripts/inputs-check.ts <url> <file>...
import { launch } from '../../test/browser/chromium';
const [url, ...files] = process.argv.slice(2);
const ctx = await launch();
const page = await ctx.newPage();
page.on('dialog', (d) => void d.accept());
await page.goto(url);
await page.getByTestId('library-summary').filter({ hasText: '112 parts' }).waitFor({ timeout: 60000 });
await page.getByRole('button', { name: 'Empty the library' }).click();
await page.locator('input[type=file][multiple][accept*=".stl"]').first().setInputFiles(files);
await page.waitForTimeout(8000);
console.log('summary:', await page.getByTestId('library-summary').textContent());
await page.getByRole('tab', { name: 'Training' }).click();
console.log('inputs:', await page.getByLabel('per-point inputs').inputValue());
await page.screenshot({ path: '/tmp/shot-inputs.png' });
await ctx.close();
