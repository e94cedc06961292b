// A fingerprint of every table: its row count and the SHA-256 of its rows as text, sorted. Two
// databases with equal fingerprints hold the same data, row for row (the order rows are stored
// in aside). Backups record it and restores check it (cli/run/db.ts).

export interface TableDigest {
  rows: number;
  sha256: string;
}

/** "schema.table" → digest, for every base table outside the system schemas. */
export async function digestTables(
  executeSql: (text: string, values?: unknown[]) => Promise<{ rows: unknown[] }>,
): Promise<Record<string, TableDigest>> {
  const { rows: tables } = (await executeSql(
    `SELECT table_schema AS s, table_name AS t FROM information_schema.tables
     WHERE table_type = 'BASE TABLE' AND table_schema NOT IN ('pg_catalog', 'information_schema')
     ORDER BY 1, 2`,
    [],
  )) as { rows: { s: string; t: string }[] };
  const out: Record<string, TableDigest> = {};
  for (const { s, t } of tables) {
    const name = `"${s.replace(/"/g, '""')}"."${t.replace(/"/g, '""')}"`;
    const { rows } = (await executeSql(
      `SELECT count(*)::int AS n,
              encode(sha256(convert_to(coalesce(string_agg(x::text, E'\\n' ORDER BY x::text), ''), 'UTF8')), 'hex') AS h
       FROM ${name} x`,
      [],
    )) as { rows: { n: number; h: string }[] };
    out[`${s}.${t}`] = { rows: rows[0].n, sha256: rows[0].h };
  }
  return out;
}
