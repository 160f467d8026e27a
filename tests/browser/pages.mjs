// What only a browser can tell: under the app's strict content security policy the pages
// load their stylesheet and chart images without a single violation, and a form with a bad
// value comes back with the message and the user's input in place. Runs the real binary on
// a fresh SQLite file with the demo, drives Debian's Chromium headless.
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { chromium } from 'playwright-core';

const binary = resolve(process.env.GLASSPOINT_BIN ?? 'target/debug/glasspoint');
const browserPath = process.env.CHROMIUM ?? '/usr/bin/chromium';
const dir = mkdtempSync(join(tmpdir(), 'glasspoint-browser-'));
let failures = 0;

function check(ok, what) {
  console.log(`${ok ? 'ok  ' : 'FAIL'} ${what}`);
  if (!ok) failures += 1;
}

function startServer() {
  const child = spawn(binary, ['serve', '--demo', '--bind', '127.0.0.1:0', '--database', `sqlite://${join(dir, 'b.db')}`], {
    cwd: dir,
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error('the server did not start within 60 s')), 60_000);
    child.stderr.on('data', (chunk) => {
      const m = /listening on (http:\/\/\S+)/.exec(chunk.toString());
      if (m) {
        clearTimeout(timer);
        resolve({ child, base: m[1] });
      }
    });
    child.on('exit', (code) => reject(new Error(`the server exited with ${code}`)));
  });
}

const { child, base } = await startServer();
const browser = await chromium.launch({
  executablePath: browserPath,
  // Playwright gives every launch a fresh, empty profile of its own.
  headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking',
    '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'],
});
try {
  const page = await browser.newPage();
  const violations = [];
  page.on('console', (msg) => {
    if (/Content Security Policy|Refused to/i.test(msg.text())) violations.push(msg.text());
  });
  page.on('pageerror', (err) => violations.push(String(err)));

  await page.goto(`${base}/formulations`);
  // Only glasspoint.css makes the header a flex row; a blocked stylesheet leaves it a block.
  const styled = await page.evaluate(() => getComputedStyle(document.querySelector('header.top')).display);
  check(styled === 'flex', `the stylesheet applies (header display: ${styled})`);
  check((await page.locator('table.grid tbody tr').count()) >= 8, 'the demo formulations are listed');

  await page.getByRole('link', { name: 'LV-001' }).click();
  check((await page.textContent('main')).includes('Maximum allowable product temperature'), 'the detail page shows the limit');

  // A cycle link page: every chart image must actually load.
  await page.goto(`${base}/cycles`);
  await page.locator('td a[href*="/links/"]').first().click();
  await page.waitForLoadState('load');
  const images = await page.$$eval('img.chart', (imgs) => imgs.map((i) => ({ src: i.src, w: i.naturalWidth })));
  check(images.length >= 4, `the link page has its charts (${images.length})`);
  check(images.every((i) => i.w > 0), `every chart image loads: ${JSON.stringify(images.filter((i) => i.w === 0))}`);

  await page.locator('a', { hasText: 'Design space' }).first().click();
  await page.waitForLoadState('load');
  const ds = await page.$$eval('img.chart', (imgs) => imgs.map((i) => i.naturalWidth));
  check(ds.length === 1 && ds[0] > 0, 'the design-space chart loads');

  // A form with a bad value: the message is shown, the typed values stay.
  await page.goto(`${base}/formulations/new`);
  await page.fill('input[name=code]', 'BROWSER-1');
  await page.fill('input[name=name]', 'Typed in a browser');
  await page.selectOption('select[name=c0_material]', { label: 'Sucrose' });
  await page.fill('input[name=c0_concentration]', '-4');
  await page.click('button[type=submit]');
  await page.waitForLoadState('load');
  check((await page.textContent('main')).includes('must be greater than zero'), 'the wrong field says why');
  check((await page.inputValue('input[name=name]')) === 'Typed in a browser', 'the typed name is kept');
  check((await page.inputValue('input[name=c0_concentration]')) === '-4', 'the typed concentration is kept');
  await page.fill('input[name=c0_concentration]', '40');
  await page.click('button[type=submit]');
  await page.waitForLoadState('load');
  check(/\/formulations\/\d+$/.test(page.url()), 'the corrected form saves');

  await page.goto(`${base}/calculators?r0_material=${await materialId(page, 'Sucrose')}&r0_fraction=1&r1_material=${await materialId(page, 'Trehalose')}&r1_fraction=1`);
  await page.waitForLoadState('load');
  const calc = await page.$$eval('img.chart', (imgs) => imgs.map((i) => i.naturalWidth));
  check(calc.length === 1 && calc[0] > 0, 'the calculator chart loads');

  check(violations.length === 0, `no content-security-policy violation or script error: ${violations.join(' | ')}`);
} finally {
  await browser.close();
  child.kill();
  rmSync(dir, { recursive: true, force: true });
}

async function materialId(page, name) {
  const res = await page.request.get(`${base}/api/v1/materials`);
  const body = await res.json();
  return body.items.find((m) => m.name === name).id;
}

if (failures > 0) {
  console.error(`${failures} browser check(s) failed`);
  process.exit(1);
}
console.log('all browser checks passed');
