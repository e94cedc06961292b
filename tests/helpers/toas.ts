import { ToaTable } from '../../shared/formats/toa-table.js';
import { checkHeader, parseToaRecord } from '../../shared/formats/toas.js';

/** Build a table in memory through the same header and row validation as the file readers. */
export function makeTable(input: object[]): ToaTable {
  const rows = input as Array<Record<string, string | number | undefined>>;
  const columns = [
    ...new Set(rows.flatMap((r) => Object.keys(r).filter((k) => r[k] !== undefined))),
  ];
  const header = checkHeader(columns);
  const t = new ToaTable(header, 4);
  rows.forEach((r, i) => t.push(parseToaRecord(r as Record<string, string>, header, i + 1)));
  return t;
}
