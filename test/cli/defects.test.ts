// The defect files through the command as users run it (`bin/earmark.js`, a child process):
// exit code, the first line, and each defect on a flag line with its timecode and channel name.

import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeDefectFile, type DefectName } from '../helpers/defect-files.ts';
import { tempDir } from '../profiles/helpers.ts';

const BIN = fileURLToPath(new URL('../../bin/earmark.js', import.meta.url));
const { dir, cleanup } = tempDir();
const paths = new Map<DefectName, string>();

function earmark(...args: string[]): { status: number | null; lines: string[] } {
  const run = spawnSync(process.execPath, [BIN, ...args], { encoding: 'utf8' });
  return { status: run.status, lines: run.stdout.split('\n') };
}

beforeAll(async () => {
  for (const name of ['clean', 'truncated', 'dropout', 'gap', 'clip', 'phase'] as const)
    paths.set(name, (await writeDefectFile(dir, name)).path);
});
afterAll(cleanup);

describe('earmark check on damaged deliveries', () => {
  it('a cut file: exit 2 and the damage is the first line (never a pass)', () => {
    const { status, lines } = earmark('check', paths.get('truncated')!, '--profile', 'ebu-r128');
    expect(status).toBe(2);
    expect(lines[0]).toMatch(/^FAIL: damaged file at 00:00:10:00: audio ends at 10\.000 s/);
    expect(
      lines.some((l) =>
        /^ {2}#1 +00:00:10:00 - 00:00:10:00 {2}fail {4}Audio ends early {2}ch all {2}\[integrity\]$/.test(l),
      ),
    ).toBe(true);
  });

  it('a clean file passes and prints its readings with units', () => {
    const { status, lines } = earmark('check', paths.get('clean')!, '--profile', 'ebu-r128');
    expect(status).toBe(0);
    expect(lines[0]).toMatch(/^PASS: all 3 checks met; integrated -23\.0 LUFS, true peak -23\.0 dBTP$/);
    expect(lines).toContainEqual(
      expect.stringMatching(
        /^readings integrated -23\.0 LUFS, LRA \d+\.\d LU, true peak -23\.0 dBTP \(reconstructed -23\.0 dBTP\), sample peak -23\.0 dBFS$/,
      ),
    );
  });

  it('a dropout in R fails the broadcast delivery with a flag at 00:00:08:00 in channel 2 R', () => {
    const { status, lines } = earmark('check', paths.get('dropout')!, '--profile', 'delivery-broadcast-stereo');
    expect(status).toBe(2);
    expect(lines).toContainEqual(
      expect.stringMatching(/00:00:08:00 - 00:00:08:12 {2}fail {4}Dropout {2}ch 2 R {2}\[no-dropouts\]/),
    );
  });

  it('an 11 s gap warns under the broadcast delivery (dead air, common practice)', () => {
    const { status, lines } = earmark('check', paths.get('gap')!, '--profile', 'delivery-broadcast-stereo');
    expect(status).toBe(1);
    expect(lines).toContainEqual(
      expect.stringMatching(/00:00:08:00 - 00:00:19:00 {2}warn {4}Gap in programme {2}ch all {2}\[no-dead-air\]/),
    );
  });

  it('clip runs are shown under ebu-r128 as remarks, the overs as failures', () => {
    const { status, lines } = earmark('check', paths.get('clip')!, '--profile', 'ebu-r128');
    expect(status).toBe(2);
    expect(lines.filter((l) => /remark {2}Clipping run {2}ch 1 L {2}worst 0\.0 dBFS/.test(l))).toHaveLength(5);
    expect(lines.some((l) => /fail {4}True-peak over {2}ch 1 L/.test(l))).toBe(true);
  });

  it('an anti-phase passage warns under the broadcast delivery, naming both channels', () => {
    const { status, lines } = earmark('check', paths.get('phase')!, '--profile', 'delivery-broadcast-stereo');
    expect(status).toBe(1);
    expect(lines.some((l) => /warn +Anti-phase passage {2}ch 1 L \/ 2 R {2}worst -1\.00 correlation/.test(l))).toBe(
      true,
    );
  });

  it('analyze lists the dropout as an event in channel 2 R', () => {
    const { status, lines } = earmark('analyze', paths.get('dropout')!);
    expect(status).toBe(0);
    expect(lines.some((l) => /00:00:08\.000 - 00:00:08\.500 {2}dropout {2}ch 2 R/.test(l))).toBe(true);
  });
});
