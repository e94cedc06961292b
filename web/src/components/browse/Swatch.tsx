/** Plot symbol names used for runs; the legend draws the same shapes. */
export type SymbolName = 'circle' | 'triangle' | 'square' | 'diamond' | 'plus' | 'times' | 'star';
export const RUN_SYMBOLS: SymbolName[] = [
  'circle',
  'triangle',
  'square',
  'diamond',
  'plus',
  'times',
  'star',
];

const PATH: Record<SymbolName, string> = {
  circle: '',
  triangle: 'M6 1.5 L10.5 10 L1.5 10 Z',
  square: 'M2 2 H10 V10 H2 Z',
  diamond: 'M6 1 L11 6 L6 11 L1 6 Z',
  plus: 'M6 1.5 V10.5 M1.5 6 H10.5',
  times: 'M2.5 2.5 L9.5 9.5 M9.5 2.5 L2.5 9.5',
  star: 'M6 1 L7.4 4.6 L11 4.8 L8.2 7.1 L9.1 10.8 L6 8.7 L2.9 10.8 L3.8 7.1 L1 4.8 L4.6 4.6 Z',
};

/** A legend mark: the plot's symbol in the plot's colour, filled or hollow. */
export function Swatch({
  symbol,
  colour,
  filled = true,
  line = false,
}: {
  symbol: SymbolName;
  colour: string;
  filled?: boolean;
  /** draw a short line through it (for series drawn with a connecting line) */
  line?: boolean;
}) {
  const open = symbol === 'plus' || symbol === 'times';
  const fill = filled && !open ? colour : 'none';
  return (
    <svg
      width="18"
      height="12"
      viewBox="-3 0 18 12"
      aria-hidden="true"
      className="inline-block shrink-0"
    >
      {line && <line x1="-3" x2="15" y1="6" y2="6" stroke={colour} strokeWidth="1.5" />}
      {symbol === 'circle' ? (
        <circle cx="6" cy="6" r="4" fill={fill} stroke={colour} strokeWidth="1.5" />
      ) : (
        <path d={PATH[symbol]} fill={fill} stroke={colour} strokeWidth="1.5" />
      )}
    </svg>
  );
}
