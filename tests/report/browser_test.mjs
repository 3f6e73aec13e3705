// Opens report.html of output folders in headless Chromium (Debian's /usr/bin/chromium,
// driven by playwright-core) with the network cut, and checks what the page shows against
// the analysis.json beside it:
//   node browser_test.mjs SCREENSHOT_DIR CASE...    CASE = NAME=FOLDER[=observed-count]
// Exit status 0 when every check passes; the failures are listed otherwise.
import { createRequire } from 'node:module';
import fs from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';

const require = createRequire(process.env.OVERTONE_BROWSER_MODULES ? path.resolve(process.env.OVERTONE_BROWSER_MODULES, 'x.js') : import.meta.url);
const { chromium } = require('playwright-core');

// The flags of a root session without a network (the machine's notes): no sandbox, no GPU,
// no background connections; software WebGL for the 3-D viewer.
const CHROMIUM_FLAGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync',
  '--use-angle=swiftshader', '--enable-unsafe-swiftshader'];
// A viewer counts as drawn when this share of its pixels differs from the white background:
// a molecule of a few atoms in sticks and spheres covers several per cent of the box.
const MIN_DRAWN_FRACTION = 0.005;
// Wavenumbers in the modes table are printed with two decimals (half a unit of the last
// place) of the page's numbers, which keep 8 significant digits (1e-4 at 10^4 cm-1).
const TABLE_ROUNDING_CM1 = 0.005 + 1e-4;
// Stick positions in the tooltips have one decimal.
const LEVEL_ROUNDING_CM1 = 0.05 + 1e-4;
const SECTIONS = ['summary', 'modes', 'levels', 'spectrum', 'families', 'symmetry'];

const failures = [];
function check(condition, message) { if (!condition) failures.push(message); }

function levelPosition(level) {
  const corrected = level.resonance_corrected_cm1;
  return typeof corrected === 'number' ? corrected : level.anharmonic_cm1;
}

async function viewerDrawnFraction(page, selector) {
  return page.evaluate(async (sel) => {
    const box = document.querySelector(sel);
    const index = window.overtoneReport.viewers.findIndex((v) => box.contains(v.getCanvas()));
    if (index < 0) return -1;
    const uri = window.overtoneReport.viewers[index].pngURI();
    const image = new Image();
    await new Promise((resolve, reject) => { image.onload = resolve; image.onerror = reject; image.src = uri; });
    const canvas = document.createElement('canvas');
    canvas.width = image.width; canvas.height = image.height;
    const context = canvas.getContext('2d');
    context.drawImage(image, 0, 0);
    const pixels = context.getImageData(0, 0, canvas.width, canvas.height).data;
    let drawn = 0;
    for (let i = 0; i < pixels.length; i += 4)
      if (pixels[i + 3] > 0 && (pixels[i] < 235 || pixels[i + 1] < 235 || pixels[i + 2] < 235)) drawn++;
    return drawn / (pixels.length / 4);
  }, selector);
}

async function checkReport(browser, name, folder, observedCount, screenshotDir) {
  const document = JSON.parse(fs.readFileSync(path.join(folder, 'analysis.json'), 'utf8'));
  const context = await browser.newContext({ offline: true, viewport: { width: 1280, height: 900 } });
  const outside = [];
  await context.route((url) => !url.href.startsWith('file:') && !url.href.startsWith('data:') && !url.href.startsWith('blob:'),
    (route) => { outside.push(route.request().url()); return route.abort(); });
  const page = await context.newPage();
  const errors = [];
  page.on('console', (message) => { if (message.type() === 'error') errors.push(message.text()); });
  page.on('pageerror', (error) => errors.push(error.message));
  await page.goto(pathToFileURL(path.resolve(folder, 'report.html')).href);
  await page.waitForSelector('body[data-ready=true]', { timeout: 20000 });
  await page.waitForTimeout(500);  // orbit viewers are drawn after layout

  const prefix = `${name}: `;
  check(errors.length === 0, prefix + 'console errors: ' + errors.join(' | '));
  check(outside.length === 0, prefix + 'requests leaving the page: ' + outside.join(' '));
  for (const id of SECTIONS) check(await page.locator(`section[data-section=${id}]`).count() === 1, prefix + `section ${id} missing`);

  // The numbers in the page are the document's.
  const modes = document.modes;
  const cells = await page.locator('table[data-table=modes] tbody tr td:nth-child(4)').allTextContents();
  check(cells.length === modes.length, prefix + `modes table has ${cells.length} rows, document ${modes.length}`);
  cells.forEach((cell, i) => check(Math.abs(parseFloat(cell.replace('i', '')) - modes[i].frequency_cm1) <= TABLE_ROUNDING_CM1,
    prefix + `mode ${i + 1}: table ${cell}, document ${modes[i].frequency_cm1}`));

  // Marks: one stick per level and per real mode, one tick per level, one backbone per continued family.
  const count = (selector) => page.locator(selector).count();
  const levels = (document.levels || []).filter((l) => Number.isFinite(levelPosition(l)));
  const realModes = modes.filter((m) => !m.imaginary);
  if (document.levels) {
    check(await count('[data-plot=spectrum] g.mk-anharmonic-stick line') === levels.length, prefix + 'anharmonic sticks != levels');
    check(await count('[data-plot=levels] g.mk-level line') === levels.length, prefix + 'level ticks != levels');
    // Each stick's tooltip gives its position to 0.1 cm-1: the document's levels, in order.
    const titles = await page.locator('[data-plot=spectrum] g.mk-anharmonic-stick line title').allTextContents();
    check(titles.length === levels.length, prefix + `${titles.length} stick tooltips for ${levels.length} levels`);
    titles.forEach((title, i) => check(Math.abs(parseFloat(title.split(' ').slice(-2)[0]) - levelPosition(levels[i])) <= LEVEL_ROUNDING_CM1,
      prefix + `level ${i + 1}: stick at ${title}, document ${levelPosition(levels[i])}`));
    const flaggedPolyads = new Set(levels.filter((l) => l.polyad !== null && l.polyad !== undefined).map((l) => l.polyad));
    check(await count('[data-plot=levels] g.mk-polyad path') === flaggedPolyads.size, prefix + 'polyad lines != polyads with levels');
  } else {
    check(await page.locator('section[data-section=levels] p.absent').count() === 1, prefix + 'levels section does not say why it is empty');
  }
  check(await count('[data-plot=spectrum] g.mk-harmonic-stick line') === realModes.length, prefix + 'harmonic sticks != modes');
  // Without intensities (or chosen so) every stick has the same height.
  await page.selectOption('section[data-section=spectrum] select', '');
  const heights = await page.locator('[data-plot=spectrum] g.mk-harmonic-stick line').evaluateAll(
    (lines) => lines.map((line) => Math.abs(line.y2.baseVal.value - line.y1.baseVal.value)));
  check(heights.length === realModes.length && heights.every((h) => Math.abs(h - heights[0]) < 0.5 && h > 1),
    prefix + 'equal-height sticks differ: ' + heights.join(' '));
  const continued = (document.families || []).filter((f) => f.continued && f.points.length);
  if (continued.length) {
    check(await count('[data-plot=backbones] g.mk-backbone path') === continued.length, prefix + 'backbones != continued families');
    const slopes = continued.filter((f) => f.mode_numbers.length === 1 && document.anharmonicity).length;
    check(await count('g.mk-vpt2-slope path') === slopes, prefix + `VPT2 slope lines != ${slopes} nondegenerate families`);
  }
  if (observedCount !== undefined)
    check(await count('[data-plot=spectrum] g.mk-observed line') === observedCount, prefix + `observed bands drawn != ${observedCount}`);
  const operations = await count('table[data-table=operations] tbody tr');
  check(operations === document.symmetry.operations.length, prefix + `operations table ${operations} rows`);

  const drawn = await viewerDrawnFraction(page, '#mode-viewer');
  check(drawn >= MIN_DRAWN_FRACTION, prefix + `mode viewer blank (drawn fraction ${drawn})`);
  if ((document.family_orbits || []).length) {
    const orbitDrawn = await viewerDrawnFraction(page, '[data-viewer=orbit]');
    check(orbitDrawn >= MIN_DRAWN_FRACTION, prefix + `orbit viewer blank (drawn fraction ${orbitDrawn})`);
  }
  await page.screenshot({ path: path.join(screenshotDir, `${name}.png`), fullPage: true });
  await context.close();
  console.log(`${name}: checked (${cells.length} modes, ${levels.length} levels, ${continued.length} backbones)`);
}

const [screenshotDir, ...cases] = process.argv.slice(2);
fs.mkdirSync(screenshotDir, { recursive: true });
const browser = await chromium.launch({ executablePath: process.env.OVERTONE_CHROMIUM || '/usr/bin/chromium', args: CHROMIUM_FLAGS,
  headless: true });
try {
  for (const spec of cases) {
    const [name, folder, observed] = spec.split('=');
    try {
      await checkReport(browser, name, folder, observed === undefined ? undefined : Number(observed), screenshotDir);
    } catch (error) {
      failures.push(`${name}: ${error.message}`);
    }
  }
} finally {
  await browser.close();
}
if (failures.length) {
  console.error('FAILED:\n  ' + failures.join('\n  '));
  process.exit(1);
}
console.log(`all ${cases.length} reports passed; screenshots in ${screenshotDir}`);
