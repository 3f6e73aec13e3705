// Opens reports in headless Chromium (network cut) and prints, per report, the time from
// the start of navigation until every section is drawn (median of REPEATS fresh pages).
//   node open_time.mjs REPEATS NAME=REPORT.html...
import { createRequire } from 'node:module';
import path from 'node:path';
import { pathToFileURL, fileURLToPath } from 'node:url';

const here = path.dirname(fileURLToPath(import.meta.url));
const require = createRequire(path.join(here, 'node_modules', 'x.js'));
const { chromium } = require('playwright-core');

const [repeats, ...reports] = process.argv.slice(2);
const browser = await chromium.launch({
  executablePath: process.env.OVERTONE_CHROMIUM || '/usr/bin/chromium',
  args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking',
    '--disable-component-update', '--disable-sync', '--use-angle=swiftshader', '--enable-unsafe-swiftshader']
});
for (const spec of reports) {
  const [name, file] = spec.split('=');
  const times = [];
  for (let r = 0; r < Number(repeats); r++) {
    const context = await browser.newContext({ offline: true, viewport: { width: 1280, height: 900 } });
    const page = await context.newPage();
    await page.goto(pathToFileURL(path.resolve(file)).href);
    await page.waitForSelector('body[data-ready=true]', { timeout: 60000 });
    times.push(await page.evaluate(() => window.overtoneReport.readyMs));
    await context.close();
  }
  times.sort((a, b) => a - b);
  console.log(`${name} ${(times[Math.floor(times.length / 2)] / 1000).toFixed(3)}`);
}
await browser.close();
