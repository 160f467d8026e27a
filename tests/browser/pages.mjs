// What only a browser can tell: under the app's strict content security policy the pages
// (the sign-in page first) load their stylesheet and chart images without a single
// violation; signing in sends the person back to the page they asked for; the navigation
// and the refusals follow the role; a reviewer signs a result through the real form and
// the history shows it; signing out ends the session; a form with a bad value comes back
// with the message and the user's input in place. Runs the real binary on a fresh SQLite
// file with the demo (whose one-time passwords are read from the server's stderr) and
// drives Debian's Chromium headless.
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { chromium } from 'playwright-core';

const binary = resolve(process.env.GLASSPOINT_BIN
  ?? join(process.env.CARGO_TARGET_DIR ?? 'target', 'debug', 'glasspoint'));
const browserPath = process.env.CHROMIUM ?? '/usr/bin/chromium';
const dir = mkdtempSync(join(tmpdir(), 'glasspoint-browser-'));
let failures = 0;

function check(ok, what) {
  console.log(`${ok ? 'ok  ' : 'FAIL'} ${what}`);
  if (!ok) failures += 1;
}

// Everything the server wrote on stderr, for the demo passwords and the error scan at the end.
let serverLog = '';

function startServer() {
  const child = spawn(binary, ['serve', '--demo', '--bind', '127.0.0.1:0', '--database', `sqlite://${join(dir, 'b.db')}`], {
    cwd: dir,
    // No colours in the log: it is searched as text.
    env: { ...process.env, NO_COLOR: '1', RUST_LOG: 'info' },
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error('the server did not start within 60 s')), 60_000);
    child.stderr.on('data', (chunk) => {
      serverLog += chunk.toString();
      const m = /listening on (http:\/\/\S+)/.exec(serverLog);
      if (m) {
        clearTimeout(timer);
        resolve({ child, base: m[1] });
      }
    });
    child.on('exit', (code) => reject(new Error(`the server exited with ${code}:\n${serverLog}`)));
  });
}

// The demo accounts' passwords, printed once: `    mhollis    scientist  password: 7ebab8…`.
function demoPasswords(log) {
  const accounts = {};
  for (const m of log.matchAll(/^\s+(\S+)\s+(scientist|reviewer|admin)\s+password: (\S+)\s*$/gm)) {
    accounts[m[2]] = { username: m[1], password: m[3] };
  }
  return accounts;
}

const { child, base } = await startServer();
const accounts = demoPasswords(serverLog);
check(['scientist', 'reviewer', 'admin'].every((r) => accounts[r]),
  `the server printed a demo account per role: ${Object.keys(accounts).join(', ')}`);

const browser = await chromium.launch({
  executablePath: browserPath,
  // Playwright gives every launch a fresh, empty profile of its own.
  headless: true,
  args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking',
    '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'],
});

// Every page of every context reports content-security-policy violations and script errors here.
const violations = [];
async function newPage() {
  // A context of its own per person: its own cookie jar.
  const context = await browser.newContext();
  const page = await context.newPage();
  page.on('console', (msg) => {
    if (/Content Security Policy|Refused to/i.test(msg.text())) violations.push(`${page.url()}: ${msg.text()}`);
  });
  page.on('pageerror', (err) => violations.push(`${page.url()}: ${String(err)}`));
  return page;
}

const path = (page) => { const u = new URL(page.url()); return u.pathname + u.search; };
const navLinks = (page) => page.$$eval('header.top nav a', (as) => as.map((a) => a.textContent.trim()));

// Fills and sends the sign-in form the page shows.
async function signIn(page, account) {
  await page.fill('input[name=username]', account.username);
  await page.fill('input[name=password]', account.password);
  await Promise.all([page.waitForNavigation(), page.click('form[action="/login"] button[type=submit]')]);
}

try {
  // --- Signing in -----------------------------------------------------------------------
  const page = await newPage();
  const asked = '/formulations?q=LV';
  const first = await page.goto(`${base}${asked}`);
  check(path(page) === `/login?next=${encodeURIComponent(asked)}`, `an anonymous visit is sent to the sign-in page with next (${path(page)})`);
  const csp = first.headers()['content-security-policy'] ?? '';
  check(/default-src 'self'/.test(csp) && !/unsafe-inline|unsafe-eval/.test(csp), `the sign-in page carries the strict policy: ${csp}`);
  // Only glasspoint.css makes the header a flex row; a blocked stylesheet leaves it a block.
  const loginStyle = await page.evaluate(() => getComputedStyle(document.querySelector('header.top')).display);
  check(loginStyle === 'flex', `the sign-in page's stylesheet applies (header display: ${loginStyle})`);
  check(!(await page.textContent('header.top')).includes('Sign out'), 'the sign-in page offers no Sign out to an anonymous visitor');
  check(await page.inputValue('input[name=next]') === asked, 'the sign-in form carries the page asked for');
  check(violations.length === 0, `the sign-in page loads with no policy violation or script error: ${violations.join(' | ')}`);

  // A wrong password: refused, on the same page, with the name kept.
  await page.fill('input[name=username]', accounts.scientist.username);
  await page.fill('input[name=password]', 'not-the-password');
  const [refused] = await Promise.all([
    page.waitForResponse((r) => r.url().endsWith('/login') && r.request().method() === 'POST'),
    page.click('form[action="/login"] button[type=submit]'),
  ]);
  await page.waitForLoadState('load');
  check(refused.status() === 401, `a wrong password is refused with 401 (${refused.status()})`);
  check((await page.textContent('main')).includes('is not right'), 'the sign-in page says why');
  check(await page.inputValue('input[name=username]') === accounts.scientist.username, 'the typed account name is kept');
  check(await page.inputValue('input[name=password]') === '', 'the password is not sent back');

  await signIn(page, accounts.scientist);
  check(path(page) === asked, `after signing in the scientist is on the page asked for (${path(page)})`);
  const cookies = await page.context().cookies();
  const session = cookies.find((c) => c.name === 'gp_session');
  check(session && session.httpOnly && session.sameSite === 'Lax', `the session cookie is HttpOnly and SameSite=Lax: ${JSON.stringify(session && { httpOnly: session.httpOnly, sameSite: session.sameSite })}`);
  check(await page.evaluate(() => document.cookie.includes('gp_session')) === false, 'scripts cannot read the session cookie');

  // --- What a scientist sees ------------------------------------------------------------
  const who = (await page.textContent('header.top .who')) ?? '';
  check(who.includes('Maren Hollis') && /scientist/i.test(who), `the header names the signed-in person: ${who.trim().replace(/\s+/g, ' ')}`);
  check(await page.locator('header.top form[action="/logout"] button').isVisible(), 'the header shows a Sign out button');
  const sciNav = await navLinks(page);
  check(sciNav.includes('Formulations') && !sciNav.some((t) => ['Review', 'Audit trail', 'Team'].includes(t)),
    `a scientist's navigation has no Review, Audit trail or Team: ${sciNav.join(', ')}`);
  const audit = await page.goto(`${base}/audit`);
  check(audit.status() === 403, `a scientist is refused the audit trail (${audit.status()})`);
  const refusal = await page.textContent('main');
  check(/Not allowed/.test(refusal) && /reviewer/.test(refusal), `the refusal page says why: ${refusal.trim().replace(/\s+/g, ' ').slice(0, 160)}`);
  check(await page.evaluate(() => getComputedStyle(document.querySelector('header.top')).display) === 'flex', 'the refusal page is styled too');
  const team = await page.goto(`${base}/admin/users`);
  check(team.status() === 403, `a scientist is refused the team page (${team.status()})`);

  // --- The pages themselves, as the scientist --------------------------------------------
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

  // A run read against its prediction: both charts load, the reading is there.
  await page.goto(`${base}/runs`);
  await page.locator('td a', { hasText: 'development run' }).first().click();
  await page.waitForLoadState('load');
  const runCharts = await page.$$eval('img.chart', (imgs) => imgs.map((i) => ({ src: i.src, w: i.naturalWidth })));
  check(runCharts.length === 2 && runCharts.every((i) => i.w > 0), `the run page's two charts load: ${JSON.stringify(runCharts)}`);
  const runText = await page.textContent('main');
  check(runText.includes('Pirani against the capacitance manometer') && runText.includes('basis by basis'),
    'the run page shows the end point from the gauges and the model error basis by basis');

  // A form with a bad value: the message is shown, the typed values stay.
  await page.goto(`${base}/formulations/new`);
  check(((await page.inputValue('form input[name=csrf_token]').catch(() => '')) ?? '').length >= 16, 'the form carries its security token');
  await page.fill('input[name=code]', 'BROWSER-1');
  await page.fill('input[name=name]', 'Typed in a browser');
  await page.selectOption('select[name=c0_material]', { label: 'Sucrose' });
  await page.fill('input[name=c0_concentration]', '-4');
  await page.click('main form.record button[type=submit]');
  await page.waitForLoadState('load');
  check((await page.textContent('main')).includes('must be greater than zero'), 'the wrong field says why');
  check((await page.inputValue('input[name=name]')) === 'Typed in a browser', 'the typed name is kept');
  check((await page.inputValue('input[name=c0_concentration]')) === '-4', 'the typed concentration is kept');
  await page.fill('input[name=c0_concentration]', '40');
  await page.click('main form.record button[type=submit]');
  await page.waitForLoadState('load');
  check(/\/formulations\/\d+$/.test(page.url()), 'the corrected form saves');

  await page.goto(`${base}/calculators?r0_material=${await materialId(page, 'Sucrose')}&r0_fraction=1&r1_material=${await materialId(page, 'Trehalose')}&r1_fraction=1`);
  await page.waitForLoadState('load');
  const calc = await page.$$eval('img.chart', (imgs) => imgs.map((i) => i.naturalWidth));
  check(calc.length === 1 && calc[0] > 0, 'the calculator chart loads');

  // --- Signing out ------------------------------------------------------------------------
  // Back after signing out must ask the server again (which sends to sign-in) rather than
  // show the signed-in page from the browser's cache: that takes Cache-Control: no-store.
  const kept = await page.goto(`${base}/containers`);
  const cacheControl = kept.headers()['cache-control'] ?? '(none)';
  check(/no-store/.test(cacheControl), `a signed-in page forbids the browser to keep it (Cache-Control: ${cacheControl})`);
  await Promise.all([page.waitForNavigation(), page.click('header.top form[action="/logout"] button')]);
  check(new URL(page.url()).pathname === '/login', `signing out lands on the sign-in page (${path(page)})`);
  check(!(await page.context().cookies()).some((c) => c.name === 'gp_session' && c.value !== ''), 'the session cookie is gone');
  await page.goBack();
  await page.waitForLoadState('load');
  check(new URL(page.url()).pathname === '/login', `going back after signing out leads to the sign-in page (${path(page)})`);
  check(!(await page.textContent('body')).includes('Maren Hollis'), 'no page shows the signed-out person after going back');
  // The old session id is dead on the server too, not only forgotten by the browser.
  const replay = await page.context().request.get(`${base}/containers`, {
    headers: { Cookie: `gp_session=${session?.value}` }, maxRedirects: 0,
  });
  check(replay.status() === 303 || replay.status() === 302 || replay.status() === 307,
    `the ended session's cookie is refused (status ${replay.status()}, to ${replay.headers().location})`);
  check((replay.headers().location ?? '').startsWith('/login'), 'the ended session is sent to sign in');
  await page.context().close();

  // --- A reviewer signs a result --------------------------------------------------------
  const rev = await newPage();
  await rev.goto(`${base}/review`);
  check(path(rev) === `/login?next=${encodeURIComponent('/review')}`, `the review queue asks for sign-in first (${path(rev)})`);
  await signIn(rev, accounts.reviewer);
  check(path(rev) === '/review', `after signing in the reviewer is on the review queue (${path(rev)})`);
  const revNav = await navLinks(rev);
  check(revNav.includes('Review') && revNav.includes('Audit trail') && !revNav.includes('Team'),
    `a reviewer's navigation has Review and Audit trail but no Team: ${revNav.join(', ')}`);
  const reviewLink = rev.locator('main a.button', { hasText: /^Review$/ }).first();
  const signHref = await reviewLink.getAttribute('href');
  const target = /^\/records\/measurement\/(\d+)\/sign$/.exec(signHref ?? '');
  check(target !== null, `the queue links a result to its signing page (${signHref})`);
  await Promise.all([rev.waitForNavigation(), reviewLink.click()]);
  check(path(rev) === signHref, `the Review button opens the signing page (${path(rev)})`);
  const meanings = await rev.$$eval('input[name=meaning]', (is) => is.map((i) => i.value));
  check(meanings.includes('reviewed') && !meanings.includes('approved'),
    `a result can be reviewed or rejected, not approved: ${meanings.join(', ')}`);

  // The wrong password signs nothing and says so.
  await rev.check('input[name=meaning][value=reviewed]');
  await rev.fill('textarea[name=reason]', 'Checked against the raw thermogram');
  await rev.fill('input[name=password]', 'not-my-password');
  await Promise.all([rev.waitForNavigation(), rev.click('main form.record button[type=submit]')]);
  check(path(rev) === signHref, 'a wrong password keeps the signer on the signing page');
  check((await rev.textContent('main')).includes('not your password'), 'the signing page says the password is wrong');
  check(await rev.isChecked('input[name=meaning][value=reviewed]'), 'the chosen meaning is kept');

  await rev.fill('input[name=password]', accounts.reviewer.password);
  const before = Date.now();
  await Promise.all([rev.waitForNavigation(), rev.click('main form.record button[type=submit]')]);
  const after = Date.now();
  const historyPath = `/records/measurement/${target?.[1]}/history`;
  check(path(rev) === historyPath, `signing leads to the history (${path(rev)})`);
  const signatures = await rev.$$eval('li.signature', (lis) => lis.map((li) => li.textContent.replace(/\s+/g, ' ').trim()));
  const mine = signatures.find((s) => s.includes('Tobias Okafor'));
  check(mine !== undefined && /^Reviewed by Tobias Okafor at /.test(mine), `the history shows the signature with the full name: ${signatures.join(' | ')}`);
  // Shown to the second ("2026-12-02 13:35:20 UTC"); an RFC 3339 time is read too.
  const when = /at (\d{4}-\d\d-\d\d)[T ](\d\d:\d\d:\d\d(?:\.\d+)?)Z? UTC/.exec(mine ?? '');
  const signedAt = when ? Date.parse(`${when[1]}T${when[2]}Z`) : NaN;
  check(when !== null && signedAt >= Math.floor(before / 1000) * 1000 - 1000 && signedAt <= after + 1000,
    `the signature carries the UTC time it was made (${when?.[0]}, between ${new Date(before).toISOString()} and ${new Date(after).toISOString()})`);
  check((mine ?? '').includes('Checked against the raw thermogram'), 'the history shows the reason given');
  check((mine ?? '').includes('(the current content)'), 'the signature holds for the current content');
  const queue = await rev.goto(`${base}/review`);
  check(queue.status() === 200 && !(await rev.locator(`main a[href="${signHref}"]`).count()), 'the signed result has left the review queue');
  const revAudit = await rev.goto(`${base}/audit`);
  check(revAudit.status() === 200, `a reviewer may read the audit trail (${revAudit.status()})`);
  await rev.context().close();

  // --- An administrator ------------------------------------------------------------------
  const adm = await newPage();
  await adm.goto(`${base}/admin/users`);
  await signIn(adm, accounts.admin);
  check(path(adm) === '/admin/users', `after signing in the administrator is on the team page (${path(adm)})`);
  const admNav = await navLinks(adm);
  check(['Review', 'Audit trail', 'Team'].every((t) => admNav.includes(t)), `an administrator's navigation has Review, Audit trail and Team: ${admNav.join(', ')}`);
  check((await adm.textContent('main')).includes(accounts.scientist.username), 'the team page lists the scientist');
  await adm.context().close();

  check(violations.length === 0, `no content-security-policy violation or script error: ${violations.join(' | ')}`);
} finally {
  await browser.close();
  child.kill();
  rmSync(dir, { recursive: true, force: true });
}

const logged = serverLog.split('\n').filter((l) => /panicked| ERROR /.test(l));
check(logged.length === 0, `the server logged no errors: ${logged.join(' | ')}`);

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
