// The review app in a real browser (Debian's Chromium through playwright-core) against a real
// server: an analyst uploads arrival times and submits the DM series, the lead approves it, a
// viewer reads it, two runs are compared, the admin makes and revokes a token, and an expired
// session comes back where it was; SQL, HTML and script payloads in a run's title and a comment
// stay text. Every screen is photographed (dist/e2e-screenshots/) and checked with axe-core (no
// violation rated serious or critical) and against the server's Content-Security-Policy (no
// violation at all, on any page).
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import {
  chromiumAvailable,
  cspViolations,
  describeProblems,
  errorNotices,
  fillSignIn,
  freshPage,
  launchChromium,
  screenshot,
  seriousViolations,
  startReviewWorld,
  statusTexts,
  step,
  unreadCspViolations,
  type ReviewWorld,
} from './helpers.js';
import { sightlineAsync, tempDir } from '../helpers/cli.js';

const ANALYST = 'ana@saltbush.test';
const LEAD = 'lead@saltbush.test';
const VIEWER = 'guest@saltbush.test';
const ADMIN = 'admin@saltbush.test';
/** one flow, with the server-side analysis of flow a in it */
const FLOW_MS = 180_000;

describe.skipIf(!chromiumAvailable)('the review app in Chromium', () => {
  let world: ReviewWorld | undefined;
  let browser: Browser | undefined;
  /** the DM series the analyst uploads in flow a; flows b and c review and read it */
  let uploadedRunId: string | undefined;

  // a fresh embedded database is the slow part: ~15 s alone, much more on a busy machine
  beforeAll(async () => {
    world = await startReviewWorld();
    browser = await launchChromium();
  }, 180_000);

  afterAll(async () => {
    await browser?.close().catch(() => undefined);
    await world?.close();
  });

  // violations that no screen check read (a screenshot without look(), a document left by
  // navigation before its check, a page closed since) fail the flow here
  afterEach(() => {
    const left = unreadCspViolations();
    expect(left, `Content-Security-Policy violations:\n${left.join('\n')}`).toEqual([]);
  });

  /**
   * A screen photographed, checked for error notices, for Content-Security-Policy violations
   * (since the page's last check) and with axe; problems are printed and fail the test at its
   * end (the flow goes on, so one run reports every screen).
   */
  async function look(page: Page, flow: string, screen: string) {
    await screenshot(page, flow, screen);
    expect.soft(await errorNotices(page), `error notices on ${screen}`).toEqual([]);
    const csp = await cspViolations(page);
    if (csp.length) console.error(`CSP violations on ${screen}:\n${csp.join('\n')}`);
    expect.soft(csp, `Content-Security-Policy violations on ${screen}`).toEqual([]);
    const problems = await seriousViolations(page, screen);
    if (problems.length)
      console.error(`accessibility problems on ${screen}:\n${describeProblems(problems)}`);
    expect
      .soft(
        problems.map((p) => `${p.screen}: ${p.id}`),
        describeProblems(problems),
      )
      .toEqual([]);
  }

  /** A signed-in page: straight to PATH, through the sign-in form it redirects to. */
  async function signedIn(email: string, path = '/') {
    const { context, page } = await freshPage(browser!);
    await page.goto(world!.url + path);
    await page.waitForURL((u) => u.pathname === '/sign-in');
    await fillSignIn(page, email, world!.password);
    await page.waitForURL((u) => u.pathname === path);
    return { context, page };
  }

  /** the file input itself (its step section carries the same name) */
  const fileInput = (page: Page) =>
    page.getByLabel('Input file').and(page.locator('input[type="file"]'));

  const runHeading = (page: Page, pulsar: string, kind: string) =>
    page.getByRole('heading', { level: 1 }).filter({ hasText: pulsar }).filter({ hasText: kind });

  it(
    'a. the analyst uploads arrival times, runs a DM series and submits it',
    async () => {
      const flow = 'a-analyst';
      const { context, page } = await freshPage(browser!);
      try {
        await step('sign-in page', async () => {
          await page.goto(world!.url + '/sign-in');
          await page.getByRole('heading', { level: 1, name: 'Sign in' }).waitFor();
          await look(page, flow, 'sign-in');
        });
        await step('sign in as the analyst with the keyboard alone', async () => {
          // the first Tab stop skips the navigation; then the form, field by field
          await page.keyboard.press('Tab');
          expect(await page.evaluate(() => document.activeElement?.textContent)).toBe(
            'Skip to content',
          );
          await page.getByLabel('E-mail').focus();
          await page.keyboard.type(ANALYST);
          await page.keyboard.press('Tab');
          await page.keyboard.type(world!.password);
          await page.keyboard.press('Enter');
          await page.getByRole('heading', { level: 1, name: 'Overview' }).waitFor();
          await page.getByRole('heading', { name: 'Your drafts' }).waitFor();
          // the pushed DM series of SBP-A is one of Ana's drafts
          await page.getByRole('link', { name: /SBP-A · DM series/ }).waitFor();
          await look(page, flow, 'overview');
        });
        await step('new analysis page', async () => {
          await page
            .getByRole('navigation', { name: 'Main' })
            .getByRole('link', { name: 'New analysis' })
            .click();
          await page.waitForURL((u) => u.pathname === '/analyses/new');
          await fileInput(page).waitFor({ state: 'attached' });
          await look(page, flow, 'new-analysis');
        });
        await step('upload SBP-C.csv as a DM series and run it', async () => {
          await fileInput(page).setInputFiles(join(world!.demoDir, 'toas/SBP-C.csv'));
          await page.getByLabel('Analysis').selectOption('dm-series');
          await page.getByRole('button', { name: 'Upload and run' }).click();
          try {
            await page.waitForURL(/\/runs\/[^/]+$/, { timeout: 120_000 });
          } catch (e) {
            // say what the page shows instead: the job's progress or its error
            await screenshot(page, flow, 'upload-stuck');
            const shown = [...(await errorNotices(page)), ...(await statusTexts(page))];
            throw new Error(
              `${(e as Error).message.split('\n')[0]}; on screen: ${shown.join(' | ')}`,
              { cause: e },
            );
          }
          uploadedRunId = new URL(page.url()).pathname.split('/').pop();
        });
        await step('run page of the new run', async () => {
          await runHeading(page, 'SBP-C', 'DM series').waitFor();
          await page.getByText('draft', { exact: true }).first().waitFor();
          await look(page, flow, 'run');
        });
        await step('submit for review', async () => {
          await page.getByRole('button', { name: 'Submit for review' }).click();
          await page.getByText('in review', { exact: true }).first().waitFor();
          expect(await page.getByRole('button', { name: 'Submit for review' }).count()).toBe(0);
          await screenshot(page, flow, 'run-submitted');
        });
      } finally {
        await context.close();
      }
    },
    FLOW_MS,
  );

  it(
    'b. the lead finds it in the review queue, comments and approves it',
    async () => {
      expect(uploadedRunId, 'flow a made no run').toBeDefined();
      const flow = 'b-lead';
      const { context, page } = await signedIn(LEAD);
      try {
        await step('overview: waiting for your review', async () => {
          const queue = page.getByRole('region', { name: 'Waiting for your review' });
          await queue.locator(`a[href="/runs/${uploadedRunId}"]`).waitFor();
          await look(page, flow, 'overview');
          await queue.locator(`a[href="/runs/${uploadedRunId}"]`).click();
          await page.waitForURL((u) => u.pathname === `/runs/${uploadedRunId}`);
        });
        await step('run page in review', async () => {
          await runHeading(page, 'SBP-C', 'DM series').waitFor();
          await page.getByText('in review', { exact: true }).first().waitFor();
          await page.getByRole('button', { name: 'Approve' }).waitFor();
          await page.getByRole('button', { name: 'Return' }).waitFor();
          await look(page, flow, 'run');
        });
        const comment = 'Annual term and trend look right; the gaps are honest.';
        await step('comment and approve', async () => {
          await page.getByLabel('Comment').fill(comment);
          await page.getByRole('button', { name: 'Approve' }).click();
          await page.getByText('approved', { exact: true }).first().waitFor();
        });
        await step('review history shows the approval', async () => {
          const history = page.getByRole('heading', { name: 'Review history' });
          await history.waitFor();
          await page.getByText(comment).first().waitFor();
          expect(await page.getByRole('button', { name: 'Approve' }).count()).toBe(0);
          await screenshot(page, flow, 'run-approved');
        });
      } finally {
        await context.close();
      }
    },
    FLOW_MS,
  );

  it(
    'c. a viewer reads the approved run and cannot review it',
    async () => {
      expect(uploadedRunId, 'flow a made no run').toBeDefined();
      const flow = 'c-viewer';
      const { context, page } = await signedIn(VIEWER, `/runs/${uploadedRunId}`);
      try {
        await step('run page, approved, read only', async () => {
          await runHeading(page, 'SBP-C', 'DM series').waitFor();
          await page.getByText('approved', { exact: true }).first().waitFor();
          await page.getByRole('link', { name: 'Download JSON' }).waitFor();
          await page.getByRole('link', { name: 'Download CSV' }).waitFor();
          for (const name of ['Approve', 'Return', 'Submit for review'])
            expect(await page.getByRole('button', { name }).count(), `button ${name}`).toBe(0);
          await look(page, flow, 'run');
        });
        await step('download the approved corrections as CSV', async () => {
          const [download] = await Promise.all([
            page.waitForEvent('download'),
            page.getByRole('link', { name: 'Download CSV' }).click(),
          ]);
          const file = await download.path();
          const [header, first] = readFileSync(file, 'utf8').split('\n');
          expect(download.suggestedFilename()).toMatch(/\.csv$/);
          expect(header.length).toBeGreaterThan(0);
          expect(first).toContain('SBP-C');
        });
      } finally {
        await context.close();
      }
    },
    FLOW_MS,
  );

  it(
    'c2. a viewer browses the runs, the pulsars and the calculator',
    async () => {
      const flow = 'c2-viewer';
      const { context, page } = await signedIn(VIEWER, '/runs');
      try {
        await step('runs table', async () => {
          const table = page.getByRole('table');
          for (const name of ['Pulsar', 'Kind', 'State', 'Created by', 'Updated'])
            await table.getByRole('columnheader', { name }).waitFor();
          await table.getByRole('link', { name: /SBP-B/ }).first().waitFor();
          await page.getByRole('button', { name: 'Next page' }).waitFor({ state: 'attached' });
          await look(page, flow, 'runs');
        });
        await step('pulsars table', async () => {
          await page
            .getByRole('navigation', { name: 'Main' })
            .getByRole('link', { name: 'Pulsars' })
            .click();
          await page.waitForURL((u) => u.pathname === '/pulsars');
          await page.getByRole('columnheader', { name: 'Pulsar' }).first().waitFor();
          await page.getByRole('link', { name: 'SBP-B', exact: true }).waitFor();
          await look(page, flow, 'pulsars');
        });
        await step('pulsar page of SBP-B', async () => {
          await page.getByRole('link', { name: 'SBP-B', exact: true }).click();
          await page.waitForURL((u) => u.pathname === '/pulsars/SBP-B');
          await page.getByRole('heading', { level: 1, name: 'SBP-B' }).waitFor();
          await page.getByRole('heading', { name: 'DM history' }).waitFor();
          await look(page, flow, 'pulsar');
        });
        await step('dispersion calculator', async () => {
          await page
            .getByRole('navigation', { name: 'Main' })
            .getByRole('link', { name: 'Dispersion calculator' })
            .click();
          await page.waitForURL((u) => u.pathname === '/calculator');
          await page.getByRole('heading', { level: 1 }).waitFor();
          await look(page, flow, 'calculator');
        });
      } finally {
        await context.close();
      }
    },
    FLOW_MS,
  );

  it(
    'd. compare two runs of one pulsar',
    async () => {
      const flow = 'd-compare';
      const [a, b] = world!.pushed.filter((r) => r.pulsar === 'SBP-B');
      const { context, page } = await signedIn(LEAD, '/compare');
      try {
        await step('compare page, nothing chosen', async () => {
          await page.getByLabel('Pulsar').waitFor();
          await look(page, flow, 'empty');
        });
        await step('choose SBP-B and its two runs', async () => {
          await page.getByLabel('Pulsar').selectOption('SBP-B');
          await page.getByLabel('Run A').selectOption(a.id);
          await page.getByLabel('Run B').selectOption(b.id);
        });
        await step('what moved', async () => {
          await page.getByRole('heading', { name: 'What moved' }).waitFor({ timeout: 15_000 });
          await look(page, flow, 'runs');
        });
      } finally {
        await context.close();
      }
    },
    FLOW_MS,
  );

  it(
    'e. the admin makes and revokes a token; an expired session comes back',
    async () => {
      const flow = 'e-admin';
      const { context, page } = await signedIn(ADMIN, '/admin');
      const tokenName = 'e2e robot';
      try {
        await step('admin page', async () => {
          for (const name of ['Users', 'API tokens', 'Audit log', 'Mail'])
            await page.getByRole('heading', { name, exact: true }).waitFor();
          await page.getByLabel(`Role for ${ANALYST}`).waitFor();
          await look(page, flow, 'admin');
        });
        let secret = '';
        const tokenWorks = async () =>
          (await fetch(`${world!.url}/api/me`, { headers: { authorization: `Bearer ${secret}` } }))
            .status;
        await step('create a token', async () => {
          await page.getByLabel('Token name').fill(tokenName);
          await page.getByRole('button', { name: 'Create token' }).click();
          const shown = page.getByLabel('New token');
          await shown.waitFor();
          secret = ((await shown.textContent()) ?? '').trim();
          expect(secret).not.toBe('');
          // the secret on screen is a working token
          expect(await tokenWorks()).toBe(200);
          await screenshot(page, flow, 'token-created');
        });
        await step('revoke it', async () => {
          page.on('dialog', (d) => void d.accept());
          // the token's row in the tokens table (the audit log names the token too)
          const row = page
            .getByRole('row')
            .filter({ has: page.getByRole('cell', { name: tokenName, exact: true }) });
          await row.getByRole('button', { name: 'Revoke' }).click();
          // the row stays and says so, or keeps a disabled Revoke button
          await expect
            .poll(
              async () => {
                if ((await row.count()) !== 1) return false;
                if (/revoked|disabled/i.test(await row.innerText())) return true;
                const button = row.getByRole('button', { name: 'Revoke' });
                return (await button.count()) === 1 && (await button.isDisabled());
              },
              { timeout: 10_000 },
            )
            .toBe(true);
          expect(await tokenWorks()).toBe(401);
          await screenshot(page, flow, 'token-revoked');
        });
        await step('sign out, then /runs asks to sign in and comes back', async () => {
          await page.getByRole('button', { name: 'Sign out' }).click();
          await page.waitForURL((u) => u.pathname === '/sign-in');
          await page.goto(world!.url + '/runs');
          await page.waitForURL((u) => u.pathname === '/sign-in');
          expect(new URL(page.url()).searchParams.get('next')).toBe('/runs');
          await page.getByText('Sign in to continue where you were.').waitFor();
          await screenshot(page, flow, 'sign-in-again');
          await fillSignIn(page, ADMIN, world!.password);
          await page.waitForURL((u) => u.pathname === '/runs');
        });
        await step(
          'a session that ends mid-visit: the next request leads to sign-in and back',
          async () => {
            await page.goto(world!.url + '/admin');
            await page.getByRole('heading', { name: 'Users', exact: true }).waitFor();
            await context.clearCookies();
            await page
              .getByRole('navigation', { name: 'Main' })
              .getByRole('link', { name: 'Runs' })
              .click();
            await page.waitForURL((u) => u.pathname === '/sign-in', { timeout: 15_000 });
            expect(new URL(page.url()).searchParams.get('next')).toBe('/runs');
            await fillSignIn(page, ADMIN, world!.password);
            await page.waitForURL((u) => u.pathname === '/runs');
          },
        );
      } finally {
        await context.close();
      }
    },
    FLOW_MS,
  );
  it(
    'f. scintillation runs: the three pictures, the limits, and τ by two routes',
    async () => {
      const flow = 'f-scint';
      const { dir, cleanup } = tempDir('sightline-e2e-scint-');
      const { context, page } = await signedIn(ANALYST, '/');
      try {
        // one visit of each pulsar from the demo: SBP-B alone, SBP-F with a scattering fit of
        // the same visit (its dynamic spectrum and its profiles share the file name)
        const first = (sub: string, pulsar: string) =>
          readdirSync(join(world!.demoDir, sub, pulsar))
            .filter((f) => f.endsWith('.npy'))
            .sort()[0];
        const results = await step('analyse two dynamic spectra and one profile set', async () => {
          const run = async (args: string[], out: string) => {
            const r = await sightlineAsync([...args, '--json', '--quiet', '--out', join(dir, out)]);
            expect(r.code, `sightline ${args.join(' ')}: ${r.stderr}`).toBe(0);
            return JSON.parse(readFileSync(join(dir, out), 'utf8')) as unknown;
          };
          const visitF = first('dynspec', 'SBP-F');
          return {
            b: await run(
              [
                'scint',
                'analyse',
                join(world!.demoDir, 'dynspec/SBP-B', first('dynspec', 'SBP-B')),
              ],
              'B.scint.json',
            ),
            f: await run(
              ['scint', 'analyse', join(world!.demoDir, 'dynspec/SBP-F', visitF)],
              'F.scint.json',
            ),
            fTails: await run(
              ['scatter', 'fit', join(world!.demoDir, 'profiles/SBP-F', visitF)],
              'F.scatter.json',
            ),
          };
        });
        const ids = await step('push them as the analyst, through the API', async () => {
          const push = (result: unknown) =>
            page.evaluate(
              async (body) => {
                const res = await fetch('/api/runs', {
                  method: 'POST',
                  headers: { 'Content-Type': 'application/json' },
                  body: JSON.stringify(body),
                });
                return { status: res.status, id: ((await res.json()) as { id?: string }).id };
              },
              { result },
            );
          const out: Record<string, string> = {};
          for (const [k, result] of Object.entries(results)) {
            const r = await push(result);
            expect(r.status, `push ${k}`).toBe(201);
            out[k] = r.id!;
          }
          return out;
        });
        await step('scint run page of SBP-B', async () => {
          await page.goto(`${world!.url}/runs/${ids.b}`);
          await runHeading(page, 'SBP-B', 'scintillation').waitFor();
          for (const name of ['Dynamic spectrum', 'Autocorrelation', 'Secondary spectrum'])
            await page.getByRole('figure', { name, exact: true }).locator('svg').first().waitFor();
          await page.getByRole('heading', { name: 'Interference' }).waitFor();
          // no scattering fit of SBP-B: the page says how to get one
          const routes = page.getByRole('region', { name: 'Scattering by two routes' });
          await routes.getByText(/No scattering fit of SBP-B within 1 day/).waitFor();
          await look(page, flow, 'run-b');
        });
        await step('the hatching of flagged blocks switches with the keyboard', async () => {
          const box = page.getByRole('checkbox', { name: /Hatch flagged blocks/ });
          if ((await box.count()) === 0) return; // a visit without interference has no switch
          await box.focus();
          await page.keyboard.press('Space');
          expect(await box.isChecked()).toBe(false);
        });
        await step('scint run page of SBP-F, with τ from the tails of the same visit', async () => {
          await page.goto(`${world!.url}/runs/${ids.f}`);
          await runHeading(page, 'SBP-F', 'scintillation').waitFor();
          const routes = page.getByRole('region', { name: 'Scattering by two routes' });
          const link = routes.getByRole('link', { name: /SBP-F · scattering, MJD/ });
          await link.waitFor();
          expect(await link.getAttribute('href')).toBe(`/runs/${ids.fTails}`);
          await routes.getByText(/From the pulse tails, carried to/).waitFor();
          await look(page, flow, 'run-f');
        });
        await step('the runs table names the kind', async () => {
          await page.goto(`${world!.url}/runs?kind=scint`);
          const table = page.getByRole('table');
          await table.getByRole('cell', { name: 'scintillation', exact: true }).first().waitFor();
          expect(
            await table.getByRole('cell', { name: 'scintillation', exact: true }).count(),
          ).toBe(2);
          await look(page, flow, 'runs');
        });
      } finally {
        await context.close();
        cleanup();
      }
    },
    FLOW_MS,
  );

  it(
    'g. SQL, HTML and script in a title and a comment stay text',
    async () => {
      const flow = 'g-injection';
      // payloads after OWASP's SQL injection and XSS prevention cheat sheets (common practice):
      // a quote that ends a SQL string, markup with event handlers, a script element, and
      // template syntax of client-side frameworks
      const title =
        'Robert\'); DROP TABLE runs;-- <img src=x onerror="window.__pwned=1"><script>window.__pwned=2</script> {{7*7}} ${7*7}';
      const comment =
        '\'; DELETE FROM reviews WHERE \'1\'=\'1 <svg onload="window.__pwned=3"></svg><iframe src="javascript:window.__pwned=4"></iframe> </p><b>bold?</b> &amp; {{7*7}}';
      // Ana's DM-per-visit fit of SBP-B: its page also draws the colour legend whose <style>
      // block the policy allows by hash
      const source = world!.pushed.find((r) => r.pulsar === 'SBP-B' && r.kind === 'dm-fit')!;
      const { context, page } = await signedIn(ANALYST, '/');
      /** a request from the page, as the signed-in analyst (her session cookie) */
      const api = (path: string, body?: unknown) =>
        page.evaluate(
          async ({ path, body }) => {
            const res = await fetch(
              path,
              body === undefined
                ? {}
                : {
                    method: 'POST',
                    headers: { 'Content-Type': 'application/json' },
                    body: JSON.stringify(body),
                  },
            );
            return { status: res.status, text: await res.text() };
          },
          { path, body },
        );
      /** what the payloads would leave behind had the page read them as markup */
      const traces = () =>
        page.evaluate(() => ({
          pwned: (window as unknown as { __pwned?: unknown }).__pwned,
          elements: document.querySelectorAll('img[src="x"], svg[onload], iframe, [onerror]')
            .length,
          scripts: [...document.scripts].filter((e) => e.textContent.includes('__pwned')).length,
          bold: [...document.querySelectorAll('b')].filter((e) => e.textContent === 'bold?').length,
        }));
      const none = { pwned: undefined, elements: 0, scripts: 0, bold: 0 };
      try {
        const id = await step('push a run with the payload title and comment on it', async () => {
          const got = await api(`/api/runs/${source.id}`);
          expect(got.status).toBe(200);
          const { result } = JSON.parse(got.text) as { result: unknown };
          const made = await api('/api/runs', { result, title });
          expect(made.status, made.text).toBe(201);
          const runId = (JSON.parse(made.text) as { id: string }).id;
          const said = await api(`/api/runs/${runId}/reviews`, { decision: 'comment', comment });
          expect(said.status, said.text).toBe(201);
          return runId;
        });
        await step('the API returns both byte for byte', async () => {
          const got = await api(`/api/runs/${id}`);
          expect(got.status).toBe(200);
          // as JSON strings, not HTML-escaped on the way in or out
          expect(got.text).toContain(JSON.stringify(title));
          const run = JSON.parse(got.text) as { title: string; reviews: { comment: string }[] };
          expect(Buffer.from(run.title).equals(Buffer.from(title))).toBe(true);
          expect(run.reviews.map((r) => r.comment)).toEqual([comment]);
        });
        await step('run page shows them as text', async () => {
          await page.goto(`${world!.url}/runs/${id}`);
          await runHeading(page, 'SBP-B', 'DM per visit').waitFor();
          await page.getByText(title, { exact: true }).first().waitFor();
          await page.getByText(comment, { exact: true }).first().waitFor();
          expect(await traces()).toEqual(none);
          await look(page, flow, 'run');
        });
        await step('runs table shows the title as text and still lists every run', async () => {
          await page.goto(`${world!.url}/runs`);
          const table = page.getByRole('table');
          await table.getByText(title, { exact: true }).waitFor();
          await table.getByRole('link', { name: /SBP-B/ }).first().waitFor();
          expect(await traces()).toEqual(none);
          await look(page, flow, 'runs');
          // the quote in the title ended no SQL string: the runs (and the reviews) are all there
          const list = await api('/api/runs?page_size=200');
          expect(list.status).toBe(200);
          const ids = (JSON.parse(list.text) as { items: { id: string }[] }).items.map((r) => r.id);
          expect(ids).toEqual(expect.arrayContaining([id, ...world!.pushed.map((r) => r.id)]));
        });
      } finally {
        await context.close();
      }
    },
    FLOW_MS,
  );
});
