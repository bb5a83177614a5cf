// Shared by the browser tests: a real tonebridged on a free loopback port with a fresh
// database (the simulated bench, paced to the wall clock so a sweep fills visibly), and
// Debian's Chromium driven by playwright-core with a fresh profile. Nothing is downloaded.
//
//   const bench = await startBench('sweep');   // service + browser + page, safety acknowledged
//   ... bench.page ...
//   await bench.close();
//
// Environment (set by tests/CMakeLists.txt): TB_SERVICE_PATH (the built tonebridged),
// TB_BROWSER_WORK (a folder for this run: database, profile, XDG dirs, TMPDIR),
// TB_SCREENSHOT_DIR (where screenshots go), TB_CHROMIUM (default /usr/bin/chromium).
import { spawn } from 'node:child_process';
import { mkdirSync, rmSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { chromium } from 'playwright-core';

export const CHROMIUM_FLAGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync'];

function need(name) {
  const v = process.env[name];
  if (!v) throw new Error(`${name} is not set: run the browser tests through ctest (ctest -L browser)`);
  return v;
}

async function startService(dir, args) {
  const out = join(dir, 'service.log');
  const child = spawn(need('TB_SERVICE_PATH'), ['--db', join(dir, 'bench.db'), '--port', '0', ...args],
    { stdio: ['ignore', 'pipe', 'pipe'] });
  let text = '';
  child.stdout.on('data', (d) => { text += d; });
  child.stderr.on('data', (d) => { text += d; });
  const port = await new Promise((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`tonebridged did not start in 30 s:\n${text}`)), 30000);
    child.on('exit', (code) => reject(new Error(`tonebridged exited with ${code}:\n${text}`)));
    const poll = setInterval(() => {
      const m = /serving http:\/\/[^:]+:(\d+)\//.exec(text);
      if (m) { clearInterval(poll); clearTimeout(timer); resolve(Number(m[1])); }
    }, 20);
  });
  child.removeAllListeners('exit');
  return {
    port, log: () => text,
    stop: () => new Promise((resolve) => {
      if (child.exitCode !== null) { resolve(); return; }
      const kill = setTimeout(() => child.kill('SIGKILL'), 20000);
      child.on('exit', () => { clearTimeout(kill); resolve(); });
      child.kill('SIGTERM');
    }),
  };
}

export async function startBench(name, { serviceArgs = ['--demo'], viewport = { width: 1280, height: 900 }, acknowledge = true } = {}) {
  const dir = join(need('TB_BROWSER_WORK'), name);
  rmSync(dir, { recursive: true, force: true });
  for (const sub of ['tmp', 'config', 'cache']) mkdirSync(join(dir, sub), { recursive: true });
  // Chromium writes outside its profile unless these point inside the test folder.
  process.env.TMPDIR = join(dir, 'tmp');
  const env = { ...process.env, XDG_CONFIG_HOME: join(dir, 'config'), XDG_CACHE_HOME: join(dir, 'cache'), TMPDIR: join(dir, 'tmp') };
  const service = await startService(dir, serviceArgs);
  let browser;
  try {
    browser = await chromium.launch({ executablePath: process.env.TB_CHROMIUM || '/usr/bin/chromium', args: CHROMIUM_FLAGS, env, headless: true });
  } catch (e) {
    await service.stop();
    throw e;
  }
  const context = await browser.newContext({ viewport, acceptDownloads: true });
  const page = await context.newPage();
  const problems = [];
  page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
  // An API answer of 4xx is logged by Chromium as a failed resource; the page shows those
  // itself (for example no reading yet), so only script errors count.
  page.on('console', (m) => {
    if (m.type() === 'error' && !m.text().startsWith('Failed to load resource')) problems.push(`console: ${m.text()}`);
  });
  const url = `http://127.0.0.1:${service.port}/`;
  await page.goto(url);
  if (acknowledge) await acknowledgeSafety(page);
  return {
    dir, url, page, context, browser, service, problems,
    api: async (path, options = {}) => {
      const r = await fetch(`http://127.0.0.1:${service.port}/api/v1${path}`, {
        method: options.method || 'GET', headers: { 'Content-Type': 'application/json' },
        body: options.body === undefined ? undefined : JSON.stringify(options.body) });
      return r.status === 204 ? null : r.json();
    },
    close: async () => {
      await browser.close().catch(() => {});
      await service.stop();
    },
  };
}

export async function acknowledgeSafety(page) {
  const dialog = page.locator('#safety');
  await dialog.waitFor({ state: 'visible' });
  await page.click('#safety-ok');
  await dialog.waitFor({ state: 'hidden' });
}

/** Runs one test body; any throw fails the ctest test with the page's own errors shown. */
export async function run(name, body, options) {
  let bench;
  try {
    bench = await startBench(name, options);
    await body(bench);
    if (bench.problems.length) throw new Error(`the page reported errors:\n${bench.problems.join('\n')}`);
    console.log(`${name}: passed`);
  } catch (e) {
    console.error(`${name}: FAILED\n${e.stack || e}`);
    if (bench) console.error(`--- service log ---\n${bench.service.log()}`);
    process.exitCode = 1;
  } finally {
    if (bench) await bench.close();
  }
}

export function readText(path) {
  return readFileSync(path, 'utf8');
}
