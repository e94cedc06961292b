import type { Db } from '../db/client.js';
import { audit } from '../db/schema.js';
import type { Actor } from '../auth/middleware.js';

export interface AuditEntry {
  action: string;
  targetType: string;
  targetId?: string | null;
  before?: unknown;
  after?: unknown;
}

/** Write one audit entry, inside the caller's transaction when given one. */
export async function writeAudit(
  tx: Pick<Db, 'insert'>,
  actor: Pick<Actor, 'id' | 'email'> | null,
  entry: AuditEntry,
  requestId?: string,
): Promise<void> {
  await tx.insert(audit).values({
    actorId: actor?.id ?? null,
    actorEmail: actor?.email ?? null,
    action: entry.action,
    targetType: entry.targetType,
    targetId: entry.targetId ?? null,
    before: entry.before ?? null,
    after: entry.after ?? null,
    requestId: requestId ?? null,
  });
}
