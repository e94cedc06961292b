/** The relations behind the table, as implemented in shared/physics/dispersion.ts. */
export function Formulas() {
  return (
    <dl className="mt-4 grid grid-cols-[auto_1fr] gap-x-4 gap-y-1 border-t border-rule pt-3 text-xs text-ink-soft">
      <dt>Delay to infinite frequency</dt>
      <dd>
        t = K DM / ν<sup>2</sup>
      </dd>
      <dt>Band sweep</dt>
      <dd>
        Δt = K DM (ν<sub>low</sub>
        <sup>−2</sup> − ν<sub>high</sub>
        <sup>−2</sup>)
      </dd>
      <dt>Intra-channel smearing</dt>
      <dd>
        t ≈ 2 K DM Δν / ν<sup>3</sup>
      </dd>
    </dl>
  );
}
