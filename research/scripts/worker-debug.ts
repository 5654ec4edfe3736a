import { launch } from '../../test/browser/chromium';
const ctx = await launch();
const page = await ctx.newPage();
page.on('worker', (w) => {
  console.log('worker', w.url());
  w.on('console', (m) => console.log('W:', m.text()));
});
page.on('console', (m) => console.log('P:', m.type(), m.text().slice(0, 300)));
page.on('pageerror', (e) => console.log('pageerror', e.message, e.stack?.slice(0, 500)));
await page.goto(process.argv[2] ?? 'http://localhost:4173/');
await page.waitForTimeout(8000);
await ctx.close();
