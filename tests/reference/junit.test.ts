import { describe, expect, it } from 'vitest';
import { baselineCheckToJunit } from '../../cli/io/junit.js';
import { checkRegression } from '../../shared/review/regression.js';
import type { DmFitLike, VisitLike } from '../../shared/review/compare.js';
import type { BaselineCheckResponse } from '../../shared/schemas/review.js';
import { python, pythonAvailable } from '../helpers/python.js';

// The XML is read back by Python's standard-library parser (xml.etree.ElementTree), an outside
// reference: it must parse (well-formed), give back every hostile name character for character,
// and its own count of <testcase>, <failure> and <skipped> must equal the totals we wrote.

interface Parsed {
  root: { tag: string; attrib: Record<string, string> };
  counted: { tests: number; failures: number; skipped: number };
  suites: {
    attrib: Record<string, string>;
    properties: Record<string, string>;
    cases: {
      classname: string;
      name: string;
      failure: { message: string; type: string; text: string } | null;
      skipped: string | null;
      out: string | null;
    }[];
  }[];
}

const PARSE = `
import json, sys
import xml.etree.ElementTree as ET
xml = json.load(sys.stdin)
root = ET.fromstring(xml.encode('utf-8'))
suites = []
for s in root.findall('testsuite'):
    cases = []
    for c in s.findall('testcase'):
        f = c.find('failure')
        k = c.find('skipped')
        o = c.find('system-out')
        cases.append({
            'classname': c.get('classname'),
            'name': c.get('name'),
            'failure': None if f is None else {'message': f.get('message'), 'type': f.get('type'), 'text': f.text or ''},
            'skipped': None if k is None else k.get('message'),
            'out': None if o is None else o.text,
        })
    props = {p.get('name'): p.get('value') for p in s.iter('property')}
    suites.append({'attrib': dict(s.attrib), 'properties': props, 'cases': cases})
print(json.dumps({
    'root': {'tag': root.tag, 'attrib': dict(root.attrib)},
    'counted': {
        'tests': len(root.findall('./testsuite/testcase')),
        'failures': len(root.findall('./testsuite/testcase/failure')),
        'skipped': len(root.findall('./testsuite/testcase/skipped')),
    },
    'suites': suites,
}))
`;

const HOSTILE = `SBP-<A> & "B" 'C' ]]> --> <!--`;

function visit(source: string, mjd: number, dm: number, err: number): VisitLike {
  return {
    source,
    mjd,
    status: 'fitted',
    dm,
    dm_err: err,
    dm_err_scaled: err,
    dm_kind: 'absolute',
  };
}
const dmFit = (visits: VisitLike[]): DmFitLike => ({ schema: 'sightline/dm-fit@1', visits });

/** A check built by the real regression code: one failing and two passing items, a missing visit, a new one. */
function sampleCheck(): BaselineCheckResponse {
  const base = dmFit([
    visit(HOSTILE, 60000, 1, 0.25),
    visit(HOSTILE, 60010, 1, 0.25),
    visit(HOSTILE, 60020, 1, 0.25),
    visit(HOSTILE, 60030, 1, 0.25),
  ]);
  const fresh = dmFit([
    visit(HOSTILE, 60000, 1.25, 0.25), // +1σ: pass
    visit(HOSTILE, 60010, 2.25, 0.25), // +5σ: fail
    visit(HOSTILE, 60020, 1, 0.25), // 0σ: pass
    visit(HOSTILE, 60040, 1, 0.25), // new: pass (informational)
  ]); // 60030 missing: fail
  const r = checkRegression(base, fresh, { toleranceSigma: 3 });
  return {
    schema: 'sightline/baseline-check@1',
    tolerance_sigma: 3,
    pass: false,
    results: [
      {
        source: HOSTILE,
        kind: 'dm-fit',
        status: 'fail',
        baseline_run_id: `run<1>&"x"`,
        n_failed: r.n_failed,
        items: r.items,
      },
      {
        source: `SBP-F\u0001 'quiet'`,
        kind: 'scatter-fit',
        status: 'no_baseline',
        baseline_run_id: null,
        n_failed: 0,
        items: [],
      },
      {
        source: 'SBP-C',
        kind: 'dm-series',
        status: 'pass',
        baseline_run_id: 'run-7',
        n_failed: 0,
        items: [],
      },
    ],
  };
}

describe.skipIf(!pythonAvailable)(
  'JUnit XML read back by xml.etree.ElementTree (Python stdlib)',
  () => {
    it('is well formed and its totals equal what the parser counts', () => {
      const xml = baselineCheckToJunit(sampleCheck());
      const p = python<Parsed>(PARSE, xml);
      expect(p.root.tag).toBe('testsuites');
      // 5 items + 1 skipped no-baseline case + 0 for the empty passing suite
      expect(p.counted).toEqual({ tests: 6, failures: 2, skipped: 1 });
      expect(p.root.attrib).toMatchObject({ tests: '6', failures: '2', skipped: '1', errors: '0' });
      expect(p.suites.map((s) => s.attrib)).toEqual([
        { name: `${HOSTILE} dm-fit`, tests: '5', failures: '2', errors: '0', skipped: '0' },
        {
          name: `SBP-F\uFFFD 'quiet' scatter-fit`,
          tests: '1',
          failures: '0',
          errors: '0',
          skipped: '1',
        },
        { name: 'SBP-C dm-series', tests: '0', failures: '0', errors: '0', skipped: '0' },
      ]);
    });

    it('gives back hostile names character for character, and the failure details', () => {
      const p = python<Parsed>(PARSE, baselineCheckToJunit(sampleCheck()));
      const [suite, skipped] = p.suites;
      expect(suite.properties).toEqual({
        baseline_run_id: `run<1>&"x"`,
        tolerance_sigma: '3',
        status: 'fail',
      });
      expect(suite.cases.map((c) => c.classname)).toEqual(
        Array(5).fill(`sightline.baseline.${HOSTILE}.dm-fit`),
      );
      expect(suite.cases.map((c) => c.name)).toEqual([
        `${HOSTILE} MJD 60000 dm`,
        `${HOSTILE} MJD 60010 dm`,
        `${HOSTILE} MJD 60020 dm`,
        `${HOSTILE} MJD 60030 presence`,
        `${HOSTILE} MJD 60040 presence`,
      ]);
      const failed = suite.cases.filter((c) => c.failure);
      expect(failed.map((c) => c.failure?.message)).toEqual([
        'deviation +5.00σ beyond ±3σ: baseline 1 ± 0.25, value 2.25',
        'missing',
      ]);
      expect(failed[0].failure?.type).toBe('regression');
      expect(failed[0].failure?.text).toContain(`source: ${HOSTILE}`);
      expect(failed[0].failure?.text).toContain('deviation: +5.00σ');
      expect(suite.cases[4].out).toBe('new');
      // a character XML 1.0 cannot carry (U+0001) is replaced, not written raw
      expect(skipped.cases).toEqual([
        {
          classname: `sightline.baseline.SBP-F\uFFFD 'quiet'.scatter-fit`,
          name: 'baseline',
          failure: null,
          skipped: `no approved baseline for SBP-F\uFFFD 'quiet' scatter-fit`,
          out: null,
        },
      ]);
    });

    it('a result marked failed with no failing item still shows one failure', () => {
      const check = sampleCheck();
      check.results = [{ ...check.results[2], status: 'fail' }];
      const p = python<Parsed>(PARSE, baselineCheckToJunit(check));
      expect(p.counted).toEqual({ tests: 1, failures: 1, skipped: 0 });
      expect(p.root.attrib).toMatchObject({ tests: '1', failures: '1', skipped: '0' });
    });

    it('the parser itself rejects broken XML, so the checks above can fail', () => {
      // control: the same reference must refuse an unescaped ampersand (XML 1.0 §2.4)
      expect(() => python(PARSE, '<testsuites name="a & b"/>')).toThrow(/python failed/);
    });
  },
);
