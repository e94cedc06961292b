// The browser suite's world: the web app built once into a temporary folder, a real review server
// (`sightline serve` as a subprocess, the way people run it) on a temporary data folder with the
// demo team and pulsars (`sightline demo generate` + `demo seed`), a few runs pushed through the
// real CLI and API, and Debian's Chromium driven by playwright-core (no browser is downloaded).
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { createRequire } from 'node:module';
import { join } from 'node:path';
import type { AxeResults, Result as AxeResult } from 'axe-core';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { BIN, ROOT, tempDir, type RunResult } from '../helpers/cli.js';

export const CHROMIUM = process.env.SIGHTLINE_CHROMIUM ?? '/usr/bin/chromium';
export const chromiumAvailable = existsSync(CHROMIUM);

if (!chromiumAvailable) {
  if (process.env.CI)
    throw new Error(`${CHROMIUM} is missing in CI; .ci/run must install Debian's chromium`);
  console.warn(
    `[e2e] skipping the browser tests: ${CHROMIUM} not found (apt-get install chromium, or set SIGHTLINE_CHROMIUM)`,
  );
}

export const SCREENSHOTS = join(ROOT, 'dist/e2e-screenshots');
export const VIEWPORT = { width: 1280, height: 900 };

/** A child process to the end, its output kept; never blocks this process. */
function run(cmd: string, args: string[], env: NodeJS.ProcessEnv = process.env) {
  return new Promise<RunResult>((resolve, reject) => {
    const child = spawn(cmd, args, { cwd: ROOT, env, stdio: ['ignore', 'pipe', 'pipe'] });
    let stdout = '';
    let stderr = '';
    child.stdout.setEncoding('utf8').on('data', (c: string) => (stdout += c));
    child.stderr.setEncoding('utf8').on('data', (c: string) => (stderr += c));
    child.on('error', reject);
    child.on('close', (code) => resolve({ code: code ?? -1, stdout, stderr }));
  });
}

/** The embedded database in the temporary folder, whatever the caller's environment says. */
function serverEnv(extra: Record<string, string> = {}): NodeJS.ProcessEnv {
  const env: NodeJS.ProcessEnv = { ...process.env, LOG_LEVEL: 'warn', ...extra };
  delete env.DATABASE_URL;
  delete env.SMTP_URL;
  return env;
}

async function cli(args: string[], env?: Record<string, string>): Promise<string> {
  const r = await run(process.execPath, [BIN, ...args], serverEnv(env));
  if (r.code !== 0) throw new Error(`sightline ${args.join(' ')} exited ${r.code}: ${r.stderr}`);
  return r.stdout;
}

/**
 * The web app built into DIR (dist/web stays as it is), as `npm run build` builds it: the test
 * runner's NODE_ENV=test would otherwise give a development build of React and its peers.
 */
async function buildWeb(outDir: string): Promise<void> {
  const vite = join(ROOT, 'node_modules/vite/bin/vite.js');
  const r = await run(
    process.execPath,
    [vite, 'build', '--outDir', outDir, '--emptyOutDir', '--logLevel', 'warn'],
    { ...process.env, NODE_ENV: 'production' },
  );
  if (r.code !== 0) throw new Error(`vite build failed (${r.code}): ${r.stderr}`);
}

interface Served {
  child: ChildProcess;
  url: string;
}

function serve(dataDir: string, webDir: string): Promise<Served> {
  return new Promise((resolve, reject) => {
    const child = spawn(
      process.execPath,
      [BIN, 'serve', '--port', '0', '--host', '127.0.0.1', '--data-dir', dataDir],
      {
        cwd: ROOT,
        // the suite signs in once per flow; keep the per-address limit out of its way
        env: serverEnv({ SIGHTLINE_WEB_DIR: webDir, SIGHTLINE_SIGN_IN_PER_MINUTE: '200' }),
        stdio: ['ignore', 'pipe', 'pipe'],
      },
    );
    let out = '';
    let err = '';
    child.stderr!.setEncoding('utf8').on('data', (c: string) => (err += c));
    child.stdout!.setEncoding('utf8').on('data', (c: string) => {
      out += c;
      const m = /review app on (http:\/\/[\d.:]+)\//.exec(out);
      if (m) resolve({ child, url: m[1] });
    });
    child.on('exit', (code) => reject(new Error(`server exited (${code}): ${err}`)));
  });
}

export interface PushedRun {
  id: string;
  pulsar: string;
  kind: string;
  state: string;
}

export interface ReviewWorld {
  url: string;
  /** the demo password of every account */
  password: string;
  /** the generated demo data set (toas/, profiles/, pulsars.json) */
  demoDir: string;
  /** runs pushed before the browser starts: two DM-per-visit runs of SBP-B, a DM series of SBP-A */
  pushed: PushedRun[];
  close(): Promise<void>;
}

/** The newest modification time of any file under DIR, in ms. */
function newestFile(dir: string): number {
  let newest = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const path = join(dir, e.name);
    newest = Math.max(newest, e.isDirectory() ? newestFile(path) : statSync(path).mtimeMs);
  }
  return newest;
}

/**
 * The server and CLI run from the bundle (`npm test` builds it first); run alone, the suite
 * would test an older server without saying so.
 */
function checkBundle(): void {
  const main = join(ROOT, 'dist/cli/main.js');
  if (!existsSync(main)) throw new Error('dist/cli/main.js is missing: run `node cli/build.mjs`');
  const sources = Math.max(...['cli', 'server', 'shared'].map((d) => newestFile(join(ROOT, d))));
  if (sources > statSync(main).mtimeMs)
    console.warn(
      '[e2e] dist/cli is older than cli/, server/ or shared/: testing the last build; run `node cli/build.mjs` (npm test does)',
    );
}

/** Everything the flows need; close() undoes it all. Prints where the time went. */
export async function startReviewWorld(): Promise<ReviewWorld> {
  checkBundle();
  const { dir, cleanup } = tempDir('sightline-e2e-');
  const webDir = join(dir, 'web');
  const demoDir = join(dir, 'demo');
  const dataDir = join(dir, 'data');
  const fits = join(dir, 'fits');
  mkdirSync(fits);
  let server: Served | undefined;
  const close = async () => {
    if (server) await stop(server.child);
    cleanup();
  };
  const times: string[] = [];
  let mark = performance.now();
  const lap = (what: string) => {
    const now = performance.now();
    times.push(`${what} ${((now - mark) / 1000).toFixed(1)} s`);
    mark = now;
  };
  try {
    // the demo catalogue first; then the database (the slow part: a fresh embedded PostgreSQL),
    // the web build and the fits side by side
    await cli(['demo', 'generate', '--out', demoDir, '--seed', '1', '--quiet']);
    lap('demo data');
    const catalogue = join(demoDir, 'pulsars.json');
    const toas = (name: string) => join(demoDir, 'toas', `${name}.csv`);
    const fit = (name: string, out: string, ...extra: string[]) =>
      cli(['dm', 'fit', toas(name), ...extra, '--quiet', '--json', '--out', join(fits, out)]);
    await Promise.all([
      cli(['demo', 'seed', '--data-dir', dataDir, '--catalogue', catalogue, '--quiet']),
      buildWeb(webDir),
      // two runs of the reference pulsar for the compare view: a first pass, and one with a
      // profile-evolution term that moves a few visits beyond 1σ
      fit('SBP-B', 'B-first.json'),
      fit('SBP-B', 'B-evolution.json', '--evolution', '1'),
      cli([
        'dm',
        'series',
        toas('SBP-A'),
        '--quiet',
        '--json',
        '--out',
        join(fits, 'A-series.json'),
      ]),
    ]);
    lap('database, web build and fits');
    const signIns = JSON.parse(readFileSync(join(dataDir, 'demo-sign-ins.json'), 'utf8')) as {
      password: string;
      tokens: Record<string, string>;
    };
    server = await serve(dataDir, webDir);
    lap('server start');
    const push = async (email: string, files: string[], submit: boolean) =>
      (
        JSON.parse(
          await cli(
            ['runs', 'push', ...files, '--json', '--quiet', ...(submit ? ['--submit'] : [])],
            { SIGHTLINE_SERVER: server!.url, SIGHTLINE_TOKEN: signIns.tokens[email] },
          ),
        ) as { runs: PushedRun[] }
      ).runs;
    const pushed = [
      ...(await push('ana@saltbush.test', [join(fits, 'B-first.json')], true)),
      ...(await push('ben@saltbush.test', [join(fits, 'B-evolution.json')], true)),
      ...(await push('ana@saltbush.test', [join(fits, 'A-series.json')], false)),
    ];
    lap('pushes');
    console.log(`[e2e] review server ready on ${server.url}: ${times.join(', ')}`);
    return { url: server.url, password: signIns.password, demoDir, pushed, close };
  } catch (e) {
    await close();
    throw e;
  }
}

/** SIGTERM, then SIGKILL if the server has not gone within 5 s. */
function stop(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return Promise.resolve();
  return new Promise((resolve) => {
    child.removeAllListeners('exit');
    const hard = setTimeout(() => child.kill('SIGKILL'), 5_000);
    child.once('exit', () => {
      clearTimeout(hard);
      resolve();
    });
    child.kill('SIGTERM');
  });
}

export function launchChromium(): Promise<Browser> {
  // CI runs as root in a container: Chromium's sandbox needs user namespaces it does not have
  return chromium.launch({ executablePath: CHROMIUM, headless: true, args: ['--no-sandbox'] });
}

/** One Content-Security-Policy violation as the page's `securitypolicyviolation` event saw it. */
interface CspEvent {
  /** unique per document and event */
  id: string;
  url: string;
  directive: string;
  blocked: string;
  source: string;
  line: number;
  sample: string;
}

/** What each page has reported and no check has read yet, kept in the test process. */
const cspSeen = new Map<
  Page,
  { events: Map<string, CspEvent>; logged: string[]; reported: Set<string> }
>();

function cspRecord(page: Page) {
  let r = cspSeen.get(page);
  if (!r) cspSeen.set(page, (r = { events: new Map(), logged: [], reported: new Set() }));
  return r;
}

function cspEvent(page: Page, v: CspEvent) {
  const r = cspRecord(page);
  if (!r.reported.has(v.id)) r.events.set(v.id, v);
}

/**
 * A fresh browser context (its own cookies) and page, 1280×900; waits give up after 15 s.
 * Every Content-Security-Policy violation is recorded. The init script, injected through the
 * debugging protocol before the page's own script (so the policy does not apply to it), keeps
 * each `securitypolicyviolation` event on window (window.__cspViolations) and hands it to the
 * test process, so that violations of a document left by navigation are kept too; Chromium's
 * console errors naming the policy (with the hash it would have needed) are kept as well.
 * cspViolations() and unreadCspViolations() read them.
 */
export async function freshPage(
  browser: Browser,
): Promise<{ context: BrowserContext; page: Page }> {
  const context = await browser.newContext({ viewport: VIEWPORT });
  context.setDefaultTimeout(15_000);
  await context.exposeBinding('__sightlineCsp', ({ page }, v: CspEvent) => {
    cspEvent(page, v);
  });
  await context.addInitScript(() => {
    const w = window as unknown as {
      __cspViolations: CspEvent[];
      __sightlineCsp?: (v: CspEvent) => Promise<void>;
    };
    const seen: CspEvent[] = [];
    w.__cspViolations = seen;
    let n = 0;
    document.addEventListener('securitypolicyviolation', (e) => {
      const v = {
        id: `${performance.timeOrigin}:${n++}`,
        url: location.href,
        directive: e.effectiveDirective,
        blocked: e.blockedURI,
        source: e.sourceFile,
        line: e.lineNumber,
        sample: e.sample,
      };
      seen.push(v);
      void w.__sightlineCsp?.(v);
    });
  });
  const page = await context.newPage();
  cspRecord(page);
  page.on('console', (m) => {
    if (m.type() === 'error' && /Content Security Policy/i.test(m.text()))
      cspRecord(page).logged.push(`${page.url()}: console: ${m.text()}`);
  });
  return { context, page };
}

/** One line per violation; clears what it reports. */
function drainCsp(page: Page): string[] {
  const r = cspSeen.get(page);
  if (!r) return [];
  const out = [
    ...[...r.events.values()].map(
      (v) =>
        `${v.url}: ${v.directive} refused ${v.blocked || '(inline)'} at ${v.source}:${v.line}${v.sample ? ` "${v.sample}"` : ''}`,
    ),
    ...r.logged,
  ];
  for (const id of r.events.keys()) r.reported.add(id);
  r.events.clear();
  r.logged.length = 0;
  return out;
}

/** Policy violations on PAGE since the last call (or since it opened), one line each; clears them. */
export async function cspViolations(page: Page): Promise<string[]> {
  // the page's own list too (emptied as read), in case a hand-over has not arrived yet
  if (!page.isClosed())
    for (const v of await page.evaluate(
      () =>
        (window as unknown as { __cspViolations?: CspEvent[] }).__cspViolations?.splice(0) ?? [],
    ))
      cspEvent(page, v);
  return drainCsp(page);
}

/**
 * Policy violations of every page opened so far that no screen check has read (screens
 * photographed without a check, pages already closed); clears them.
 */
export function unreadCspViolations(): string[] {
  const out = [...cspSeen.keys()].flatMap(drainCsp);
  for (const page of cspSeen.keys()) if (page.isClosed()) cspSeen.delete(page);
  return out;
}

/** Sign in through the form on the current page (which must be the sign-in page). */
export async function fillSignIn(page: Page, email: string, password: string): Promise<void> {
  await page.getByLabel('E-mail').fill(email);
  await page.getByLabel('Password').fill(password);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await page.waitForURL((u) => u.pathname !== '/sign-in');
}

/** A step of a flow: its name is in the error when it fails, so the report says where. */
export async function step<T>(name: string, work: () => Promise<T>): Promise<T> {
  const started = performance.now();
  try {
    return await work();
  } catch (e) {
    // eslint-disable-next-line no-control-regex -- Playwright colours its call log
    const text = (e as Error).message.replace(/\u001b\[[\d;]*m/g, '');
    // Playwright's call log says what it was waiting for: the screen element that is missing
    const waiting = /waiting for (.+)/.exec(text)?.[1];
    const message = text.split('\n')[0] + (waiting ? ` (waiting for ${waiting})` : '');
    throw new Error(`step "${name}" failed: ${message}`, { cause: e });
  } finally {
    // SIGHTLINE_E2E_STEP_TIMES=1: where a slow suite spends its time
    if (process.env.SIGHTLINE_E2E_STEP_TIMES)
      console.log(`[e2e] ${name}: ${((performance.now() - started) / 1000).toFixed(1)} s`);
  }
}

/** Wait until the page has stopped fetching and shows no "Loading …" state. */
export async function settled(page: Page): Promise<void> {
  await page.waitForLoadState('networkidle');
  await page
    .getByText(/^Loading .*…$/)
    .first()
    .waitFor({ state: 'hidden' });
}

export async function screenshot(page: Page, flow: string, screen: string): Promise<void> {
  await settled(page);
  mkdirSync(SCREENSHOTS, { recursive: true });
  await page.screenshot({ path: join(SCREENSHOTS, `${flow}-${screen}.png`), fullPage: true });
}

const require = createRequire(import.meta.url);
// evaluated through the browser's debugging protocol: the app's Content-Security-Policy
// (script-src 'self') stays on and still refuses inline script tags such as addScriptTag's
const AXE_SOURCE = readFileSync(require.resolve('axe-core/axe.min.js'), 'utf8');

export interface A11yProblem {
  screen: string;
  id: string;
  impact: string;
  help: string;
  targets: string[];
}

/** axe-core on the page as it is now; violations rated serious or critical. */
export async function seriousViolations(page: Page, screen: string): Promise<A11yProblem[]> {
  await page.evaluate(AXE_SOURCE);
  const results = await page.evaluate(() =>
    (window as unknown as { axe: { run(): Promise<AxeResults> } }).axe.run(),
  );
  return (
    results.violations
      // SIGHTLINE_E2E_AXE_ALL=1 reports (and fails on) moderate and minor findings too
      .filter(
        (v: AxeResult) =>
          v.impact === 'serious' || v.impact === 'critical' || !!process.env.SIGHTLINE_E2E_AXE_ALL,
      )
      .map((v: AxeResult) => ({
        screen,
        id: v.id,
        impact: v.impact ?? '',
        help: `${v.help} (${v.helpUrl})`,
        targets: v.nodes.map((n) => n.target.join(' ')),
      }))
  );
}

/** The text of every error notice (role="alert") on screen: a screen in a flow shows none. */
export async function errorNotices(page: Page): Promise<string[]> {
  const texts: string[] = [];
  for (const alert of await page.getByRole('alert').all())
    if (await alert.isVisible()) texts.push((await alert.innerText()).trim());
  return texts;
}

/** The text of every visible status message (role="status"), such as a job's progress. */
export async function statusTexts(page: Page): Promise<string[]> {
  const texts: string[] = [];
  for (const status of await page.getByRole('status').all())
    if (await status.isVisible()) texts.push((await status.innerText()).trim());
  return texts;
}

/** One line per rule, so the screen's owner knows what to fix and where. */
export function describeProblems(problems: A11yProblem[]): string {
  return problems
    .map(
      (p) =>
        `[${p.screen}] ${p.id} (${p.impact}): ${p.help}\n    ${p.targets.slice(0, 8).join('\n    ')}${
          p.targets.length > 8 ? `\n    … and ${p.targets.length - 8} more` : ''
        }`,
    )
    .join('\n');
}
