/** "2026-12-02 01:14" in the reader's own time zone: dense, sortable, unambiguous. */
export function dateTime(iso: string | null | undefined): string {
  if (!iso) return '—';
  const d = new Date(iso);
  const p = (n: number) => String(n).padStart(2, '0');
  return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())} ${p(d.getHours())}:${p(d.getMinutes())}`;
}

export const KIND_LABEL: Record<string, string> = {
  'dm-fit': 'DM per visit',
  'dm-series': 'DM series',
  'scatter-fit': 'scattering',
  scint: 'scintillation',
};
