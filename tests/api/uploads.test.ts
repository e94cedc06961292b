// Uploads and server-side analyses through the HTTP API: files are size-limited, type-checked by
// content, stored once by SHA-256; an analysis answers 202 at once, runs off the request thread
// and leaves a draft correction run of the person who asked.
// Sources: interfaces.md "HTTP API" (uploads: multipart, size-limited, SHA-256 recorded;
// analyses: server-side, off the request thread; roles table: viewers do not upload) and the
// CLI's own result for the same file (cli/run/dm.ts runDmFit, the function behind
// `sightline dm fit`), which the server must reproduce.
import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { stringify } from 'csv-stringify/sync';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runDmFit } from '../../cli/run/dm.js';
import { dispersionConstant } from '../../shared/physics/constants.js';
import { createRng } from '../../shared/sim/random.js';
import { simulateResidualVisit, type SimToa } from '../../shared/sim/visits.js';
import { tempDir } from '../helpers/cli.js';
import { ENGINES, startTestServer, type TestServer } from '../helpers/server.js';

/** The upload limit of this file's server: room for the real table, not for the oversized one. */
const UPLOAD_BYTES = 256 * 1024;

/** Arrival-time residuals of one invented pulsar: 12 visits of 10 frequencies, DM wandering. */
function simulatedCsv(): Buffer {
  const k = dispersionConstant('conventional');
  const rng = createRng(4711);
  const toas: SimToa[] = [];
  for (let v = 0; v < 12; v++)
    toas.push(
      ...simulateResidualVisit(
        k,
        {
          source: 'SBP-C',
          startMjd: 60400.3 + 14 * v,
          ddm: 3e-4 * Math.sin(v / 3),
          freqsMhz: [650, 720, 810, 900, 1100, 1300, 1450, 1650, 2300, 2900],
          errUs: [0.9, 0.8, 0.7, 0.6, 0.5, 0.5, 0.4, 0.4, 0.6, 0.8],
          offsetUs: 1.2,
        },
        rng,
      ),
    );
  return Buffer.from(stringify(toas, { header: true }));
}

const sha256 = (b: Buffer | string) => createHash('sha256').update(b).digest('hex');

interface Job {
  id: string;
  state: 'queued' | 'running' | 'done' | 'failed';
  run_id: string | null;
  error: { code: string; message: string; details?: Record<string, unknown> } | null;
}

describe.each(ENGINES)('uploads and analyses on %s', (engine) => {
  let t: TestServer;
  const local = tempDir('sightline-uploads-');
  const csv = simulatedCsv();
  const csvName = 'sbp-c-visits.csv';
  let uploadId: string;

  const as = (who: string) => ({ Cookie: t.people[who].cookie, Origin: t.url });
  const upload = (who: string, bytes: Buffer, name: string, field = 'file') =>
    t.http.post('/api/uploads').set(as(who)).attach(field, bytes, name);
  const analyse = (who: string, body: object) =>
    t.http.post('/api/analyses').set(as(who)).send(body);
  const uploadsDir = () => join(t.dataDir, 'uploads');
  /** stored files (named by SHA-256), leaving out the folder multer receives into */
  const stored = () => readdirSync(uploadsDir()).filter((f) => f !== 'tmp');
  const leftovers = () => readdirSync(join(uploadsDir(), 'tmp'));
  const finished = async (id: string, ms = 60_000): Promise<Job> => {
    const end = Date.now() + ms;
    for (;;) {
      const r = await t.http.get(`/api/analyses/${id}`).set(as('ana'));
      expect(r.status).toBe(200);
      if (r.body.state === 'done' || r.body.state === 'failed') return r.body;
      if (Date.now() > end) throw new Error(`analysis ${id} still ${r.body.state}`);
      await new Promise((res) => setTimeout(res, 100));
    }
  };

  beforeAll(async () => {
    t = await startTestServer(
      engine,
      { guest: 'viewer', ana: 'analyst', ben: 'analyst', admin: 'admin' },
      { uploadBytes: UPLOAD_BYTES },
    );
  }, 60_000);
  afterAll(async () => {
    await t?.close();
    local.cleanup();
  });

  describe('uploads', () => {
    it('stores an arrival-time table under its SHA-256 and says so', async () => {
      expect(csv.length).toBeGreaterThan(4096);
      expect(csv.length).toBeLessThan(UPLOAD_BYTES);
      const r = await upload('ana', csv, csvName);
      expect(r.status, r.text).toBe(201);
      uploadId = r.body.id;
      expect(r.body).toMatchObject({
        file_name: csvName,
        size_bytes: csv.length,
        sha256: sha256(csv),
        kind: 'toas',
        uploaded_by: t.people.ana.id,
      });
      const file = join(uploadsDir(), r.body.sha256);
      expect(readFileSync(file).equals(csv)).toBe(true);
      expect(leftovers()).toEqual([]);
      expect((await t.http.get(`/api/uploads/${uploadId}`).set(as('guest'))).body).toEqual(r.body);
      const audit = await t.http.get(`/api/audit?target=${uploadId}`).set(as('admin'));
      expect(audit.body.items[0]).toMatchObject({
        action: 'upload.create',
        actor: { email: 'ana@saltbush.test' },
        after: { sha256: sha256(csv), kind: 'toas' },
      });
    });

    it('keeps one file for the same bytes sent twice', async () => {
      const before = stored();
      const r = await upload('ben', csv, 'copy-of-visits.csv');
      expect(r.status).toBe(201);
      expect(r.body.sha256).toBe(sha256(csv));
      expect(r.body.id).not.toBe(uploadId);
      expect(r.body.uploaded_by).toBe(t.people.ben.id);
      expect(stored()).toEqual(before);
      expect(stored().filter((f) => f === sha256(csv))).toHaveLength(1);
      expect(leftovers()).toEqual([]);
    });

    it('refuses a file over the upload limit with 413, keeping nothing', async () => {
      const before = stored();
      // a valid table, just too long
      const rows = csv.toString().split('\n');
      const big = Buffer.from(
        [rows[0], ...Array.from({ length: 40 }, () => rows.slice(1).filter(Boolean)).flat()].join(
          '\n',
        ),
      );
      expect(big.length).toBeGreaterThan(UPLOAD_BYTES);
      const r = await upload('ana', big, 'big.csv');
      expect(r.status).toBe(413);
      expect(r.body.error.code).toBe('too_large');
      expect(r.body.error.message).toContain(String(UPLOAD_BYTES));
      expect(stored()).toEqual(before);
      expect(existsSync(join(uploadsDir(), sha256(big)))).toBe(false);
      expect(leftovers()).toEqual([]);
    });

    it('refuses an empty file with 400', async () => {
      const r = await upload('ana', Buffer.alloc(0), 'empty.csv');
      expect(r.status).toBe(400);
      expect(r.body.error).toMatchObject({ code: 'invalid_upload' });
      expect(r.body.error.message).toMatch(/empty\.csv.*empty/);
    });

    it('refuses binary and unknown files with 415, saying what is accepted', async () => {
      const before = stored();
      const cases: [string, Buffer][] = [
        ['noise.bin', Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0, 0, 0, 13])],
        ['notes.txt', Buffer.from('dear diary, the telescope was cold today\n')],
        // a table without the arrival-time columns
        ['weather.csv', Buffer.from('date,temp_c\n2026-01-01,21\n')],
        ['cube.npy', Buffer.concat([Buffer.from('\x93NUMPY\x01\x00', 'latin1'), Buffer.alloc(64)])],
      ];
      for (const [name, bytes] of cases) {
        const r = await upload('ana', bytes, name);
        expect(r.status, name).toBe(415);
        expect(r.body.error.code).toBe('unsupported_file');
        expect(r.body.error.message).toContain(name);
        // the sentence names what would be taken
        expect(r.body.error.message).toMatch(/accepted: an arrival-time table \(CSV with/);
        expect(r.body.error.message).toMatch(/source, mjd, freq_mhz, err_us/);
      }
      expect(stored()).toEqual(before);
      expect(leftovers()).toEqual([]);
    });

    it('refuses a request without a file in the "file" field with 400', async () => {
      let r = await t.http.post('/api/uploads').set(as('ana')).field('note', 'no file here');
      expect(r.status).toBe(400);
      expect(r.body.error).toMatchObject({
        code: 'invalid_upload',
        details: [{ path: 'file', message: 'required' }],
      });
      r = await t.http.post('/api/uploads').set(as('ana')).send({ file: 'not multipart' });
      expect(r.status).toBe(400);
      expect(r.body.error.code).toBe('invalid_upload');
      // the file under another name, or two files
      r = await upload('ana', csv, csvName, 'upload');
      expect(r.status).toBe(400);
      expect(r.body.error.code).toBe('invalid_upload');
      expect(r.body.error.message).toMatch(/"file" field/);
      r = await t.http
        .post('/api/uploads')
        .set(as('ana'))
        .attach('file', csv, 'a.csv')
        .attach('file', csv, 'b.csv');
      expect(r.status).toBe(400);
      expect(r.body.error.code).toBe('invalid_upload');
      expect(leftovers()).toEqual([]);
    });

    it('a viewer cannot upload (403), and nothing is stored', async () => {
      const before = stored();
      const other = Buffer.concat([csv, Buffer.from('SBP-C,60600.3,1400,0.5,0.1\n')]);
      const r = await upload('guest', other, 'viewer.csv');
      expect(r.status).toBe(403);
      expect(r.body.error.code).toBe('forbidden');
      expect(stored()).toEqual(before);
      expect(leftovers()).toEqual([]);
      // but reads the list
      expect((await t.http.get('/api/uploads').set(as('guest'))).status).toBe(200);
    });
  });

  describe('analyses', () => {
    it('runs a dm-fit off the request thread into a draft run that equals the CLI result', async () => {
      const r = await analyse('ana', { kind: 'dm-fit', upload_id: uploadId, params: {} });
      expect(r.status, r.text).toBe(202);
      // answered before the work: the job is still queued in the answer
      expect(r.body).toMatchObject({ kind: 'dm-fit', upload_id: uploadId, state: 'queued' });
      expect(r.body.run_id).toBeNull();
      expect(r.headers.location).toBe(`/api/analyses/${r.body.id}`);

      const job = await finished(r.body.id);
      expect(job.error).toBeNull();
      expect(job.state).toBe('done');
      expect(job.run_id).toMatch(/^[0-9a-f-]{36}$/);

      const run = await t.http.get(`/api/runs/${job.run_id}`).set(as('guest'));
      expect(run.status).toBe(200);
      expect(run.body).toMatchObject({
        kind: 'dm-fit',
        state: 'draft',
        pulsar: 'SBP-C',
        upload_id: uploadId,
        created_by: { id: t.people.ana.id, email: 'ana@saltbush.test' },
        input: [{ path: csvName, sha256: sha256(csv), rows: 120 }],
      });

      // the same file through the CLI's function, with `sightline dm fit`'s defaults
      const file = join(local.dir, csvName);
      writeFileSync(file, csv);
      const cli = await runDmFit(file, {
        evolution: 0,
        scatter: 'none',
        refFreq: 1000,
        quiet: true,
        inputName: csvName,
      });
      const server = run.body.result as typeof cli;
      expect(server.summary).toEqual(cli.summary);
      expect(server.summary.n_fitted).toBe(12);
      expect(server.visits).toHaveLength(cli.visits.length);
      server.visits.forEach((v, i) => {
        const c = cli.visits[i];
        expect(v.mjd).toBe(c.mjd);
        expect(v.dm).toBe(c.dm);
        expect(v.dm_err).toBe(c.dm_err);
        expect(v.chi2).toBe(c.chi2);
        expect(v.dof).toBe(c.dof);
      });
      // and everything else, the run's clock and the build stamp aside
      const strip = ({ created_utc: _c, software: _s, ...rest }: typeof cli) => rest;
      expect(strip(server)).toEqual(JSON.parse(JSON.stringify(strip(cli))));
    });

    it('a table with a bad row fails the job as invalid_input naming the row and column', async () => {
      const text =
        'source,mjd,freq_mhz,err_us,residual_us\n' +
        'SBP-E,60500.1,800,0.5,1\n' +
        'SBP-E,60500.1,1400,0.5,2\n' +
        'SBP-E,60500.1,2000,-0.5,3\n';
      const up = await upload('ana', Buffer.from(text), 'sbp-e-bad.csv');
      // the header is fine, so the upload is taken; the rows are the analysis's to check
      expect(up.status).toBe(201);
      const r = await analyse('ana', { kind: 'dm-fit', upload_id: up.body.id });
      expect(r.status).toBe(202);
      const job = await finished(r.body.id);
      expect(job.state).toBe('failed');
      expect(job.run_id).toBeNull();
      expect(job.error).toMatchObject({
        code: 'invalid_input',
        details: { file: 'sbp-e-bad.csv', row: 3, column: 'err_us' },
      });
      expect(job.error!.message).toMatch(/^sbp-e-bad\.csv: row 3/);
      // the stored name (the SHA-256) is ours, never shown
      expect(job.error!.message).not.toContain(up.body.sha256);
    });

    it('refuses the wrong kind of input, unknown uploads and bad params at once', async () => {
      let r = await analyse('ana', { kind: 'scatter-fit', upload_id: uploadId });
      expect(r.status).toBe(400);
      expect(r.body.error).toMatchObject({
        code: 'wrong_input_kind',
        details: [{ path: 'upload_id' }],
      });
      expect(r.body.error.message).toMatch(/scatter-fit reads a profile set/);
      expect(r.body.error.message).toMatch(/arrival-time table/);
      r = await analyse('ana', {
        kind: 'dm-fit',
        upload_id: '00000000-0000-4000-8000-000000000000',
      });
      expect(r.status).toBe(404);
      r = await analyse('ana', { kind: 'dm-fit', upload_id: uploadId, params: { clip_sigma: 0 } });
      expect(r.status).toBe(400);
      expect(r.body.error.details).toEqual([
        expect.objectContaining({ path: 'params.clip_sigma' }),
      ]);
      r = await analyse('ana', { kind: 'delay', upload_id: uploadId });
      expect(r.status).toBe(400);
      expect(r.body.error.details[0].path).toBe('kind');
    });

    it('a viewer cannot start an analysis (403) but can follow one', async () => {
      const r = await analyse('guest', { kind: 'dm-fit', upload_id: uploadId });
      expect(r.status).toBe(403);
      expect(r.body.error.code).toBe('forbidden');
      const list = await t.http.get('/api/analyses').set(as('guest'));
      expect(list.status).toBe(200);
      expect(list.body.items.length).toBeGreaterThanOrEqual(2);
    });
  });
});
