// `earmark check` on a file with more events than the analysis keeps: the text says the listing
// was cut, how many detections and of which kind, and counts only the flags it can list.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.ts';
import type { QcReport } from '../../src/profiles/index.ts';
import { writeDriven } from '../helpers/driven.ts';
import { unitless } from '../helpers/units.ts';
import { tempDir } from '../profiles/helpers.ts';
import { captureMerged } from '../helpers/cli-io.ts';

const { dir, cleanup } = tempDir();
let driven = '';
beforeAll(async () => {
  driven = await writeDriven(dir, 8);
});
afterAll(cleanup);

describe('earmark check past the event cap', () => {
  it('the text counts listed flags and names the detections past the cap by kind', async () => {
    const json = captureMerged();
    expect(await main(['check', driven, '--profile', 'delivery-broadcast-stereo', '--json'], json)).toBe(2);
    const report = JSON.parse(json.out) as QcReport;
    const unlisted = report.unlistedEvents?.find((u) => u.kind === 'clipping');
    expect(unlisted?.count).toBeGreaterThan(0);

    const io = captureMerged();
    expect(await main(['check', driven, '--profile', 'delivery-broadcast-stereo', '--all'], io)).toBe(2);
    const n = report.flagCounts;
    expect(io.out).toContain(`flags    ${report.flagsTotal} (${n.fail} fail, ${n.warn} warn, ${n.remark} remark)`);
    expect(io.out).toContain(
      `  listing cut: ${unlisted?.count} more detections past the analysis's event cap, not listed and not in the flag count above (the checks count them all): clipping ${unlisted?.count} (no-clipping, fail)`,
    );
    // No "... N more" line: every flag made is listed.
    expect(io.out).not.toMatch(/\.\.\. \d+ more/);
    expect(unitless(io.out)).toEqual([]);
  });
});
