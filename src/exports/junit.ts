// A batch summary as JUnit XML, for pipelines that already show test results: one <testsuite>
// per batch, one <testcase> per file. fail -> <failure>; a file that could not be checked (or a
// job that failed) -> <error>; a job not finished -> <skipped>. warn is a choice (`warnAs`):
// 'pass' (default: a passing case whose <system-out> says what warned, so a pipeline stays green
// but the note is one click away), 'failure', or 'skipped'.

import type { QcReport } from '../profiles/index.ts';

export type JunitWarnAs = 'pass' | 'failure' | 'skipped';
export const JUNIT_WARN_AS: readonly JunitWarnAs[] = ['pass', 'failure', 'skipped'];

/** What a test case reads of a report (a batch keeps only this much of each file's report). */
export type ReportSummary = Pick<
  QcReport,
  'verdict' | 'headline' | 'profile' | 'checks' | 'flagCounts' | 'flagsTotal' | 'flags' | 'unlistedEvents'
> & { summary: Pick<QcReport['summary'], 'integratedLufs' | 'truePeakDbtp'> };

/** The summary of a full report: the readings and judgements, without the analysis series. */
export function summarise(r: ReportSummary): ReportSummary {
  const { verdict, headline, profile, checks, flagCounts, flagsTotal, flags, unlistedEvents } = r;
  const { integratedLufs, truePeakDbtp } = r.summary;
  return {
    verdict,
    headline,
    profile,
    checks,
    flagCounts,
    flagsTotal,
    flags,
    ...(unlistedEvents ? { unlistedEvents } : {}),
    summary: { integratedLufs, truePeakDbtp },
  };
}

export type JunitEntry =
  | { name: string; report: ReportSummary }
  | { name: string; error: { code: string; message: string } }
  | { name: string; pending: string };

export interface JunitOptions {
  suiteName?: string;
  warnAs?: JunitWarnAs;
  /** ISO 8601 time of the summary (the suite's `timestamp`). */
  timestamp?: string;
}

/**
 * Text safe in XML 1.0 character data and attribute values: markup characters escaped, and every
 * character outside the XML 1.0 `Char` production (W3C XML 1.0 5th ed., section 2.2: C0 controls
 * but tab, LF and CR; U+FFFE, U+FFFF; unpaired surrogates) replaced by U+FFFD. In attributes tab,
 * LF and CR are written as character references, since attribute-value normalisation (section
 * 3.3.3) would turn them into spaces.
 */
export function xmlText(value: string, attribute = false): string {
  const valid = value.replace(
    /[\u0000-\u0008\u000b\u000c\u000e-\u001f\ufffe\uffff]|[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/g,
    '\ufffd',
  );
  const escaped = valid.replaceAll('&', '&amp;').replaceAll('<', '&lt;').replaceAll('>', '&gt;');
  if (!attribute) return escaped;
  return escaped
    .replaceAll('"', '&quot;')
    .replaceAll("'", '&apos;')
    .replaceAll('\t', '&#9;')
    .replaceAll('\n', '&#10;')
    .replaceAll('\r', '&#13;');
}

const attr = (name: string, value: string | number) => ` ${name}="${xmlText(String(value), true)}"`;

/** The lines a person needs: the broken checks and the flag counts. */
function details(report: ReportSummary): string {
  const lines = report.checks.filter((c) => !c.passed).map((c) => `${c.severity}: ${c.ruleId}: ${c.explanation}`);
  const n = report.flagCounts;
  const unlisted = (report.unlistedEvents ?? []).reduce((sum, u) => sum + u.count, 0);
  lines.push(
    `flags: ${report.flagsTotal} (${n.fail} fail, ${n.warn} warn, ${n.remark} remark)${unlisted > 0 ? `; ${unlisted} more detections past the event cap, not listed` : ''}`,
  );
  return lines.join('\n');
}

const reading = (value: number | null, unit: string) => (value === null ? 'none' : `${value.toFixed(1)} ${unit}`);

function testcase(entry: JunitEntry, classname: string, warnAs: JunitWarnAs): { xml: string; outcome: Outcome } {
  const open = `    <testcase${attr('name', entry.name)}${attr('classname', classname)}`;
  if ('error' in entry) {
    const body = `<error${attr('message', entry.error.message)}${attr('type', entry.error.code)}/>`;
    return { xml: `${open}>\n      ${body}\n    </testcase>\n`, outcome: 'error' };
  }
  if ('pending' in entry)
    return {
      xml: `${open}>\n      <skipped${attr('message', entry.pending)}/>\n    </testcase>\n`,
      outcome: 'skipped',
    };
  const r = entry.report;
  const summary = `verdict ${r.verdict}; integrated ${reading(r.summary.integratedLufs, 'LUFS')}; true peak ${reading(r.summary.truePeakDbtp, 'dBTP')}; profile ${r.profile.id} ${r.profile.version}`;
  const props = `      <properties>\n${[
    ['verdict', r.verdict],
    ['profile', `${r.profile.id} ${r.profile.version}`],
    ['integrated_lufs', r.summary.integratedLufs === null ? '' : String(r.summary.integratedLufs)],
    ['true_peak_dbtp', r.summary.truePeakDbtp === null ? '' : String(r.summary.truePeakDbtp)],
  ]
    .map(([k, v]) => `        <property${attr('name', k)}${attr('value', v)}/>\n`)
    .join('')}      </properties>\n`;
  const out = `      <system-out>${xmlText(`${r.headline}\n${summary}\n${details(r)}`)}</system-out>\n`;
  let inner = '';
  let outcome: Outcome = 'pass';
  if (r.verdict === 'fail' || (r.verdict === 'warn' && warnAs === 'failure')) {
    inner = `      <failure${attr('message', r.headline)}${attr('type', r.verdict)}>${xmlText(details(r))}</failure>\n`;
    outcome = 'failure';
  } else if (r.verdict === 'warn' && warnAs === 'skipped') {
    inner = `      <skipped${attr('message', r.headline)}/>\n`;
    outcome = 'skipped';
  }
  return { xml: `${open}>\n${props}${inner}${out}    </testcase>\n`, outcome };
}

type Outcome = 'pass' | 'failure' | 'error' | 'skipped';

export function junitXml(entries: readonly JunitEntry[], options: JunitOptions = {}): string {
  const warnAs = options.warnAs ?? 'pass';
  const suite = options.suiteName ?? 'earmark';
  // classname: the profile that judged the file (JUnit viewers group by it).
  const cases = entries.map((e) => testcase(e, 'report' in e ? `earmark.${e.report.profile.id}` : 'earmark', warnAs));
  const count = (o: Outcome) => cases.filter((c) => c.outcome === o).length;
  const totals =
    attr('tests', cases.length) +
    attr('failures', count('failure')) +
    attr('errors', count('error')) +
    attr('skipped', count('skipped'));
  const timestamp = options.timestamp ? attr('timestamp', options.timestamp) : '';
  return (
    '<?xml version="1.0" encoding="UTF-8"?>\n' +
    `<testsuites${attr('name', suite)}${totals}>\n` +
    `  <testsuite${attr('name', suite)}${totals}${timestamp}>\n` +
    cases.map((c) => c.xml).join('') +
    '  </testsuite>\n</testsuites>\n'
  );
}
