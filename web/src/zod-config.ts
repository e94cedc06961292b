// Imported first by main.tsx, before any module builds a schema: zod probes for eval
// (new Function) when it builds an object schema, and the server's Content-Security-Policy
// (script-src 'self', no 'unsafe-eval') reports the caught probe as a violation. jitless skips
// the probe; eval is refused by the policy anyway, so the fast path was never available.
import { z } from 'zod';

z.config({ jitless: true });
