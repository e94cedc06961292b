import { and, eq, sql } from 'drizzle-orm';
import { Router } from 'express';
import { rememberRfi, type RfiFlag, type RfiRunBand } from '../../shared/review/rfi-memory.js';
import { receiverParam } from '../../shared/schemas/api.js';
import { anyone } from '../auth/middleware.js';
import type { Services } from '../context.js';
import { rfiChannels, runs } from '../db/schema.js';
import { parseBody } from '../errors.js';

/**
 * `GET /api/rfi/:receiver`: the interference channels remembered for a receiver from its scint
 * runs, and the mask `sightline scint analyse --mask-from-server` starts from. A receiver with
 * no scint runs yet answers with empty lists (nothing is remembered), not 404.
 */
export function rfiRouter(s: Services): Router {
  const r = Router();
  r.get('/rfi/:receiver', anyone, async (req, res) => {
    const receiver = parseBody(receiverParam, req.params.receiver, 'receiver');
    const runRows = await s.db
      .select({ id: runs.id, summary: runs.summary })
      .from(runs)
      .where(and(eq(runs.kind, 'scint'), sql`${runs.summary}->>'receiver' = ${receiver}`));
    const bands: RfiRunBand[] = runRows.map((x) => {
      const sm = x.summary as { freq_range_mhz?: [number, number]; channel_mhz?: number };
      return {
        runId: x.id,
        freqMinMhz: sm.freq_range_mhz?.[0] ?? NaN,
        freqMaxMhz: sm.freq_range_mhz?.[1] ?? NaN,
        channelMhz: sm.channel_mhz ?? 0,
      };
    });
    const flags = await s.db
      .select({
        runId: rfiChannels.runId,
        freqMhz: rfiChannels.freqMhz,
        channelMhz: rfiChannels.channelMhz,
        kind: rfiChannels.kind,
      })
      .from(rfiChannels)
      .where(eq(rfiChannels.receiver, receiver));
    res.json(rememberRfi(receiver, bands, flags as RfiFlag[]));
  });
  return r;
}
