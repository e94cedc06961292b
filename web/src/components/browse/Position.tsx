import { fixed } from '../../lib/format';

/** Sky position as stored (right ascension and declination in degrees), dense and copyable. */
export function Position({ ra, dec }: { ra: number | null; dec: number | null }) {
  if (ra === null || dec === null) return <span className="text-ink-soft">not recorded</span>;
  return (
    <span className="num whitespace-nowrap">
      {fixed(ra, 3)}°, {dec >= 0 ? '+' : ''}
      {fixed(dec, 3)}°
    </span>
  );
}
