import { sql } from 'drizzle-orm';
import { Router } from 'express';
import { publicRoute } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { SOFTWARE } from '../software.js';

/** Liveness and the database it answers from; 503 when the database does not answer. */
export function healthRouter(s: Services): Router {
  const r = Router();
  r.get('/health', publicRoute('liveness probes run without an account'), async (_req, res) => {
    let database: 'ok' | 'unavailable' = 'ok';
    try {
      await s.db.execute(sql`select 1`);
    } catch {
      database = 'unavailable';
    }
    res.status(database === 'ok' ? 200 : 503).json({
      status: database === 'ok' ? 'ok' : 'degraded',
      software: SOFTWARE,
      database: { engine: s.database.engine, status: database },
      mail: s.mailer.target,
    });
  });
  return r;
}
