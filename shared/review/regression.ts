import type { RegressionItem, RegressionResult } from '../schemas/review.js';
import {
  QUANTITY_ORDER,
  CompareError,
  comparableKindOf,
  entitiesOf,
  incomparable,
  matchEntities,
  type ComparableResult,
  type Entity,
  type MatchOptions,
} from './compare.js';

/**
 * Regression check of a fresh result against an approved baseline (`sightline baseline check`,
 * run by CI after any pipeline change on the reference pulsars' unchanged data).
 */

export interface RegressionOptions extends MatchOptions {
  /** an item passes when |deviation| ≤ this many baseline σ; > 0 */
  toleranceSigma: number;
  /** check only this source's visits / points / bands (a result may hold several pulsars) */
  source?: string;
}

/** The sources a result covers, in order of first appearance. */
export function sourcesOf(result: ComparableResult): string[] {
  return [...new Set(entitiesOf(result).map((e) => e.source))];
}

/**
 * Check `fresh` against `baseline`, matched as in compareResults (same source, |ΔMJD| or |Δf|
 * below the tolerance, one to one, nearest first).
 *
 * deviation = (value − baseline) / σ_baseline, with σ_baseline the baseline's own quoted error
 * (a visit's `dm_err_scaled ?? dm_err`). Both fits use the same data, so their errors are not
 * independent and adding them in quadrature (as run-against-run compare does) would hide real
 * changes; the baseline's error is the scale on which a change of pipeline should stay small.
 *
 * Items, baseline order first:
 * - a baseline visit/band missing from the fresh result: quantity 'presence', fails ('missing');
 * - fitted in the baseline but not in the fresh result: quantity 'status', fails;
 * - fitted in both: one item per quantity the baseline has, pass = |deviation| ≤ tolerance;
 *   a quantity the baseline has and the fresh result lacks fails ('missing'); a baseline value
 *   without an error (a fixed α) must come back exactly;
 * - not fitted in the baseline: informational 'status' item, passes;
 * - in the fresh result only: informational 'presence' item, passes ('new').
 */
export function checkRegression(
  baseline: ComparableResult,
  fresh: ComparableResult,
  options: RegressionOptions,
): RegressionResult {
  const tol = options.toleranceSigma;
  if (!(tol > 0) || !Number.isFinite(tol)) {
    throw new RangeError(`tolerance must be a positive number of σ, got ${tol}`);
  }
  const kind = comparableKindOf(baseline);
  const freshKind = comparableKindOf(fresh);
  if (kind !== freshKind) {
    throw new CompareError(
      'kind_mismatch',
      `cannot check a ${freshKind} result against a ${kind} baseline`,
    );
  }
  const only = (list: Entity[]) =>
    options.source === undefined ? list : list.filter((e) => e.source === options.source);
  const eb = only(entitiesOf(baseline));
  const ef = only(entitiesOf(fresh));
  const m = matchEntities(kind, eb, ef, options);
  const partner = new Map(m.pairs.map(([i, j]) => [i, j]));

  const items: RegressionItem[] = [];
  const item = (
    e: Entity,
    quantity: RegressionItem['quantity'],
    fields: Partial<RegressionItem> & Pick<RegressionItem, 'pass'>,
  ): void => {
    items.push({
      source: e.source,
      kind,
      key: e.label,
      quantity,
      baseline: null,
      value: null,
      sigma: null,
      deviation_sigma: null,
      ...fields,
    });
  };

  eb.forEach((x, i) => {
    const j = partner.get(i);
    if (j === undefined) {
      item(x, 'presence', { pass: false, reason: 'missing' });
      return;
    }
    const y = ef[j];
    if (!x.fitted) {
      item(x, 'status', {
        pass: true,
        reason: y.fitted
          ? `fitted now (baseline: ${x.status})`
          : `not fitted in either (baseline: ${x.status}, new: ${y.status})`,
      });
      return;
    }
    if (!y.fitted) {
      item(x, 'status', { pass: false, reason: `not fitted: ${y.status} (baseline: fitted)` });
      return;
    }
    for (const q of QUANTITY_ORDER) {
      const vb = x.values[q];
      const vf = y.values[q];
      if (!vb) {
        if (vf) item(x, q, { value: vf.value, pass: true, reason: 'new' });
        continue;
      }
      const base = { baseline: vb.value, sigma: vb.err };
      if (!vf) {
        item(x, q, { ...base, pass: false, reason: 'missing' });
        continue;
      }
      const why = incomparable(q, x, y);
      if (why) {
        item(x, q, { ...base, value: vf.value, pass: false, reason: why });
        continue;
      }
      if (vb.err === null || vb.err === 0) {
        const same = vf.value === vb.value;
        item(x, q, {
          ...base,
          value: vf.value,
          pass: same,
          reason: `baseline ${vb.fixed ? 'held it fixed' : 'gives no error'}: must match exactly`,
        });
        continue;
      }
      const deviation = (vf.value - vb.value) / vb.err;
      if (!Number.isFinite(deviation)) {
        item(x, q, { ...base, value: vf.value, pass: false, reason: 'deviation is not finite' });
        continue;
      }
      item(x, q, {
        ...base,
        value: vf.value,
        deviation_sigma: deviation,
        pass: Math.abs(deviation) <= tol,
        ...(Math.abs(deviation) <= tol
          ? {}
          : { reason: `moved ${deviation.toFixed(2)}σ, beyond ±${tol}σ` }),
      });
    }
  });
  for (const j of m.bOnly) item(ef[j], 'presence', { pass: true, reason: 'new' });

  const nFailed = items.filter((it) => !it.pass).length;
  return { pass: nFailed === 0, n_items: items.length, n_failed: nFailed, items };
}
