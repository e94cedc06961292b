// Uploads (multer): size-limited, one file per request, type-checked by content, stored once
// under the data directory by SHA-256 (uploads/<sha256>), with a row naming who sent what.
import { createHash } from 'node:crypto';
import { createReadStream, existsSync, mkdirSync, openSync, readSync, closeSync } from 'node:fs';
import { rename, rm } from 'node:fs/promises';
import path from 'node:path';
import { desc, eq } from 'drizzle-orm';
import { Router } from 'express';
import multer from 'multer';
import { actorOf, anyone, contributor } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { uploads } from '../db/schema.js';
import { ApiError, notFoundError } from '../errors.js';
import { writeAudit } from '../services/audit.js';

export const UPLOAD_KINDS = ['toas', 'profiles', 'result'] as const;
export type UploadKind = (typeof UPLOAD_KINDS)[number];

function sha256Of(file: string): Promise<string> {
  return new Promise((resolve, reject) => {
    const h = createHash('sha256');
    createReadStream(file)
      .on('data', (c) => h.update(c))
      .on('error', reject)
      .on('end', () => resolve(h.digest('hex')));
  });
}

function head(file: string, bytes = 64 * 1024): string {
  const fd = openSync(file, 'r');
  try {
    const buf = Buffer.alloc(bytes);
    const n = readSync(fd, buf, 0, bytes, 0);
    return buf.subarray(0, n).toString('utf8');
  } finally {
    closeSync(fd);
  }
}

/**
 * What an uploaded file holds, from its first bytes: an arrival-time table (CSV with the
 * required columns, a JSON array or NDJSON of arrival times) or a JSON profile set. Anything
 * else is refused with 415 and a sentence saying what is accepted.
 */
export function detectKind(text: string, fileName: string): UploadKind {
  const accepted =
    'accepted: an arrival-time table (CSV with source, mjd, freq_mhz, err_us; or JSON/NDJSON) or a JSON profile set ({"source","mjd","period_s","profiles":[…]}), or a dm-fit result (JSON)';
  if (text.startsWith('\x93NUMPY'))
    throw new ApiError(
      415,
      'unsupported_file',
      `${fileName}: .npy cubes are not accepted as uploads yet; ${accepted}`,
    );
  if (text.includes('\u0000'))
    throw new ApiError(415, 'unsupported_file', `${fileName}: binary content; ${accepted}`);
  const t = text.replace(/^\uFEFF/, '').trimStart();
  if (t.startsWith('{') && /"profiles"\s*:/.test(t.slice(0, 4096))) return 'profiles';
  if (t.startsWith('{') && /^\{\s*"schema"\s*:\s*"sightline\/dm-fit@/.test(t)) return 'result';
  if (t.startsWith('[') || (t.startsWith('{') && /"mjd"\s*:/.test(t.split('\n')[0]))) return 'toas';
  const header = t
    .split(/\r?\n/, 1)[0]
    .split(',')
    .map((c) => c.trim().replace(/^"|"$/g, ''));
  if (['mjd', 'freq_mhz', 'err_us'].every((c) => header.includes(c))) return 'toas';
  throw new ApiError(415, 'unsupported_file', `${fileName}: not a Sightline input; ${accepted}`);
}

export function uploadView(u: typeof uploads.$inferSelect) {
  return {
    id: u.id,
    file_name: u.fileName,
    size_bytes: u.sizeBytes,
    sha256: u.sha256,
    kind: u.kind,
    uploaded_by: u.uploadedBy,
    created_at: u.createdAt.toISOString(),
  };
}

export function uploadsRouter(s: Services): Router {
  const r = Router();
  const root = path.join(s.dataDir, 'uploads');
  const tmp = path.join(root, 'tmp');
  mkdirSync(tmp, { recursive: true });
  const receive = multer({
    dest: tmp,
    limits: { fileSize: s.limits.uploadBytes, files: 1, fields: 10, parts: 12 },
  }).single('file');

  r.post('/uploads', contributor, (req, res, next) => {
    receive(req, res, (err: unknown) => {
      if (!err) {
        next();
        return;
      }
      const e = err as { code?: string; message?: string };
      if (e.code === 'LIMIT_FILE_SIZE')
        next(
          new ApiError(
            413,
            'too_large',
            `the file is larger than the ${s.limits.uploadBytes}-byte upload limit`,
          ),
        );
      else if (e.code?.startsWith('LIMIT_'))
        next(
          new ApiError(400, 'invalid_upload', `${e.message}: send one file in the "file" field`),
        );
      else next(err);
    });
  });
  r.post('/uploads', contributor, async (req, res) => {
    const file = req.file;
    if (!file)
      throw new ApiError(
        400,
        'invalid_upload',
        'no file: send multipart/form-data with the file in the "file" field',
        [{ path: 'file', message: 'required' }],
      );
    try {
      if (file.size === 0)
        throw new ApiError(400, 'invalid_upload', `${file.originalname}: the file is empty`);
      const kind = detectKind(head(file.path), file.originalname);
      const sha256 = await sha256Of(file.path);
      const storagePath = path.join('uploads', sha256);
      const target = path.join(s.dataDir, storagePath);
      if (existsSync(target)) await rm(file.path, { force: true });
      else await rename(file.path, target);
      const actor = actorOf(req);
      const [row] = await s.db
        .insert(uploads)
        .values({
          fileName: path.basename(file.originalname).slice(0, 255),
          sizeBytes: file.size,
          sha256,
          kind,
          storagePath,
          uploadedBy: actor.id,
        })
        .returning();
      await writeAudit(
        s.db,
        actor,
        {
          action: 'upload.create',
          targetType: 'upload',
          targetId: row.id,
          after: { sha256, kind },
        },
        String(req.id),
      );
      res.status(201).json(uploadView(row));
    } finally {
      await rm(file.path, { force: true });
    }
  });

  r.get('/uploads', anyone, async (_req, res) => {
    const rows = await s.db.select().from(uploads).orderBy(desc(uploads.createdAt)).limit(500);
    res.json({ items: rows.map(uploadView) });
  });

  r.get('/uploads/:id', anyone, async (req, res) => {
    const id = String(req.params.id);
    if (!/^[0-9a-f-]{36}$/i.test(id)) throw notFoundError(`upload ${id}`);
    const [row] = await s.db.select().from(uploads).where(eq(uploads.id, id));
    if (!row) throw notFoundError(`upload ${id}`);
    res.json(uploadView(row));
  });

  return r;
}
