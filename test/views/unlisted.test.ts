// The page's wording for events past the analysis's event cap (format.js unlistedText): how many,
// of which kind, judged by which rule, and that the flag counts leave them out.
import { describe, expect, it } from 'vitest';
import { unlistedText } from '../../src/views/assets/format.js';

describe('detections past the event cap', () => {
  it('says nothing when every event is listed, or for a report made before the field existed', () => {
    expect(unlistedText({ unlistedEvents: [] })).toBe('');
    expect(unlistedText({})).toBe('');
  });

  it('names each kind with its count, rule and severity, and the total', () => {
    expect(
      unlistedText({
        unlistedEvents: [
          { kind: 'clipping', ruleId: 'no-clipping', severity: 'fail', count: 74205 },
          { kind: 'true_peak_over', ruleId: null, severity: 'remark', count: 1 },
        ],
      }),
    ).toBe(
      "Listing cut: 74206 more detections past the analysis's event cap, not listed and not merged into the flags counted here: clipping 74205 (no-clipping, fail), true peak over 1 (remark). The checks count them all.",
    );
    expect(
      unlistedText({ unlistedEvents: [{ kind: 'dropout', ruleId: 'no-dropouts', severity: 'fail', count: 1 }] }),
    ).toBe(
      "Listing cut: 1 more detection past the analysis's event cap, not listed and not merged into the flags counted here: dropout 1 (no-dropouts, fail). The checks count them all.",
    );
  });
});
