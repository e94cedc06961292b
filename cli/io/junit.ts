import { create } from 'xmlbuilder2';
import type {
  BaselineCheckEntry,
  BaselineCheckResponse,
  RegressionItem,
} from '../../shared/schemas/review.js';

/**
 * JUnit XML for CI from a baseline-check response (`sightline baseline check --junit FILE`):
 * one <testsuite> per checked result, one <testcase> per regression item, <failure> for items
 * that failed, <skipped> for results without an approved baseline. The layout is the common
 * JUnit one CI servers read (testsuites › testsuite › testcase › failure | skipped).
 */

/** Characters XML 1.0 allows (XML 1.0 §2.2 "Char"); anything else becomes U+FFFD. */
const NOT_XML_CHAR = /[^\t\n\r\u0020-\uD7FF\uE000-\uFFFD\u{10000}-\u{10FFFF}]/gu;

/** Text safe to hand to the XML writer, which escapes <, &, > and quotes itself. */
export function xmlSafe(text: string): string {
  return text.replace(NOT_XML_CHAR, '\uFFFD');
}

export interface JunitCounts {
  tests: number;
  failures: number;
  skipped: number;
}

function fmtValue(x: number | null): string {
  return x === null ? 'n/a' : String(x);
}
function fmtSigma(x: number | null): string {
  return x === null ? 'n/a' : String(Number(x.toPrecision(3)));
}
function fmtDeviation(x: number | null): string {
  return x === null ? 'n/a' : `${x < 0 ? '-' : '+'}${Math.abs(x).toFixed(2)}σ`;
}

function failureMessage(item: RegressionItem, toleranceSigma: number): string {
  if (item.deviation_sigma !== null) {
    return (
      `deviation ${fmtDeviation(item.deviation_sigma)} beyond ±${toleranceSigma}σ: ` +
      `baseline ${fmtValue(item.baseline)} ± ${fmtSigma(item.sigma)}, value ${fmtValue(item.value)}`
    );
  }
  const values =
    item.baseline !== null || item.value !== null
      ? ` (baseline ${fmtValue(item.baseline)} ± ${fmtSigma(item.sigma)}, value ${fmtValue(item.value)})`
      : '';
  return `${item.reason ?? 'failed'}${values}`;
}

function details(entry: BaselineCheckEntry, item: RegressionItem, toleranceSigma: number): string {
  return [
    `source: ${entry.source}`,
    `kind: ${entry.kind}`,
    `key: ${item.key}`,
    `quantity: ${item.quantity}`,
    `baseline: ${fmtValue(item.baseline)}`,
    `value: ${fmtValue(item.value)}`,
    `sigma (baseline): ${fmtValue(item.sigma)}`,
    `deviation: ${fmtDeviation(item.deviation_sigma)}`,
    `tolerance: ±${toleranceSigma}σ`,
    ...(item.reason ? [`reason: ${item.reason}`] : []),
    `baseline run: ${entry.baseline_run_id ?? 'none'}`,
  ].join('\n');
}

interface Case {
  name: string;
  failure?: { message: string; text: string };
  skipped?: string;
  out?: string;
}

function casesOf(entry: BaselineCheckEntry, toleranceSigma: number): Case[] {
  if (entry.status === 'no_baseline') {
    return [
      {
        name: 'baseline',
        skipped: `no approved baseline for ${entry.source} ${entry.kind}`,
      },
    ];
  }
  const cases: Case[] = entry.items.map((item) => ({
    name: `${item.key} ${item.quantity}`,
    ...(item.pass
      ? item.reason
        ? { out: item.reason }
        : {}
      : {
          failure: {
            message: failureMessage(item, toleranceSigma),
            text: details(entry, item, toleranceSigma),
          },
        }),
  }));
  // a result marked failed must show as failed even if no single item carries the failure
  if (entry.status === 'fail' && !cases.some((c) => c.failure)) {
    const message = `${entry.source} ${entry.kind}: baseline check failed`;
    cases.push({ name: 'baseline', failure: { message, text: message } });
  }
  return cases;
}

function countsOf(cases: Case[]): JunitCounts {
  return {
    tests: cases.length,
    failures: cases.filter((c) => c.failure).length,
    skipped: cases.filter((c) => c.skipped !== undefined).length,
  };
}

/** The JUnit XML document (UTF-8, with declaration) for a baseline-check response. */
export function baselineCheckToJunit(check: BaselineCheckResponse): string {
  const suites = check.results.map((entry) => {
    const cases = casesOf(entry, check.tolerance_sigma);
    return { entry, cases, counts: countsOf(cases) };
  });
  const total: JunitCounts = { tests: 0, failures: 0, skipped: 0 };
  for (const s of suites) {
    total.tests += s.counts.tests;
    total.failures += s.counts.failures;
    total.skipped += s.counts.skipped;
  }

  const doc = create({ version: '1.0', encoding: 'UTF-8' });
  const root = doc.ele('testsuites', {
    name: 'sightline baseline check',
    tests: String(total.tests),
    failures: String(total.failures),
    errors: '0',
    skipped: String(total.skipped),
  });
  for (const { entry, cases, counts } of suites) {
    const suite = root.ele('testsuite', {
      name: xmlSafe(`${entry.source} ${entry.kind}`),
      tests: String(counts.tests),
      failures: String(counts.failures),
      errors: '0',
      skipped: String(counts.skipped),
    });
    const props = suite.ele('properties');
    props.ele('property', {
      name: 'baseline_run_id',
      value: xmlSafe(entry.baseline_run_id ?? ''),
    });
    props.ele('property', { name: 'tolerance_sigma', value: String(check.tolerance_sigma) });
    props.ele('property', { name: 'status', value: entry.status });
    const classname = xmlSafe(`sightline.baseline.${entry.source}.${entry.kind}`);
    for (const c of cases) {
      const tc = suite.ele('testcase', { classname, name: xmlSafe(c.name) });
      if (c.failure) {
        tc.ele('failure', { message: xmlSafe(c.failure.message), type: 'regression' }).txt(
          xmlSafe(c.failure.text),
        );
      }
      if (c.skipped !== undefined) tc.ele('skipped', { message: xmlSafe(c.skipped) });
      if (c.out) tc.ele('system-out').txt(xmlSafe(c.out));
    }
  }
  // wellFormed: the writer re-checks every name, attribute and text it writes
  return doc.end({ prettyPrint: true, wellFormed: true }) + '\n';
}
