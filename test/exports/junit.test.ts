// JUnit XML batch summary: counts, outcomes per verdict, and XML 1.0 escaping (W3C XML 1.0 5th ed.
// section 2.2 Char production), checked by Python's XML parser (an outside reader) when present.
import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { junitXml, summarise, xmlText, type JunitEntry } from '../../src/exports/junit.ts';
import type { QcReport } from '../../src/profiles/index.ts';
import { sampleReport } from '../views/sample-report.ts';

const withVerdict = (verdict: QcReport['verdict'], headline: string): QcReport => ({
  ...sampleReport(),
  verdict,
  headline,
});

const entries: JunitEntry[] = [
  { name: 'a-pass.wav', report: withVerdict('pass', 'PASS: all checks met') },
  { name: 'b-warn.wav', report: withVerdict('warn', 'WARN: mono') },
  { name: 'c-fail <&> "\u0001\u001b\ud800".wav', report: withVerdict('fail', 'FAIL: too loud\u0007') },
  { name: 'd-broken.wav', error: { code: 'corrupt_file', message: 'no fmt chunk found' } },
  { name: 'e-queued', pending: 'job is queued' },
];

function python(): boolean {
  try {
    execFileSync('python3', ['-c', 'pass']);
    return true;
  } catch {
    return false;
  }
}

/** Parsed by Python's expat-based parser: tests, failures, errors, skipped and each case's outcome. */
function parse(xml: string): { totals: string; cases: string[] } {
  const script = `import sys, xml.etree.ElementTree as E
r = E.fromstring(sys.stdin.buffer.read())
s = r.find('testsuite')
print(' '.join(s.get(k) for k in ('tests', 'failures', 'errors', 'skipped')))
for c in s.findall('testcase'):
    kids = [k.tag for k in c if k.tag in ('failure', 'error', 'skipped')]
    print(c.get('name').encode('unicode_escape').decode() + '|' + (kids[0] if kids else 'pass'))`;
  const [totals, ...cases] = execFileSync('python3', ['-c', script], { input: xml, encoding: 'utf8' })
    .trim()
    .split('\n');
  return { totals, cases };
}

describe('JUnit XML', () => {
  it('escapes markup and replaces characters XML 1.0 forbids', () => {
    expect(xmlText('a<b>&c')).toBe('a&lt;b&gt;&amp;c');
    expect(xmlText('x\u0000y\u001fz\ufffe')).toBe('x\ufffdy\ufffdz\ufffd');
    expect(xmlText('tab\tline\n"\'', true)).toBe('tab&#9;line&#10;&quot;&apos;');
    expect(xmlText('\ud83c\udfb5 ok \udc00')).toBe('\ud83c\udfb5 ok \ufffd');
  });

  it('warn passes by default with a note in system-out; counts add up', () => {
    const xml = junitXml(entries, { suiteName: 'nightly' });
    expect(xml).toContain('<testsuite name="nightly" tests="5" failures="1" errors="1" skipped="1"');
    expect(xml).toMatch(/name="b-warn.wav"[\s\S]*?<system-out>WARN: mono/);
    expect(xml).not.toMatch(/[\u0000-\u0008\u000b\u000c\u000e-\u001f]/);
  });

  it.runIf(python())('is well-formed XML for an outside parser, with one outcome per case', () => {
    expect(parse(junitXml(entries))).toEqual({
      totals: '5 1 1 1',
      cases: [
        'a-pass.wav|pass',
        'b-warn.wav|pass',
        'c-fail <&> "\\ufffd\\ufffd\\ufffd".wav|failure',
        'd-broken.wav|error',
        'e-queued|skipped',
      ],
    });
    expect(parse(junitXml(entries, { warnAs: 'failure' })).cases[1]).toBe('b-warn.wav|failure');
    expect(parse(junitXml(entries, { warnAs: 'skipped' })).totals).toBe('5 1 1 2');
  });
});

describe('JUnit XML: events past the event cap', () => {
  it('the failure details say how many detections were not listed; the summary keeps them', () => {
    const report: QcReport = {
      ...withVerdict('fail', 'FAIL: clipping'),
      unlistedEvents: [{ kind: 'clipping', ruleId: 'no-clipping', severity: 'fail', count: 74205 }],
    };
    const xml = junitXml([{ name: 'driven.wav', report }]);
    expect(xml).toContain('; 74205 more detections past the event cap, not listed');
    expect(summarise(report).unlistedEvents).toEqual(report.unlistedEvents);
  });
});
