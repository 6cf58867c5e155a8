// The rule registry (src/profiles/rules/index.ts) has one entry per rule type of the profile
// schema, and each engine event kind is judged by at most one rule type.
import { describe, expect, it } from 'vitest';
import { profileSchema } from '../../src/profiles/index.ts';
import { RULES, RULE_TYPES } from '../../src/profiles/rules/index.ts';

/** Every `type` value the schema's rule definitions accept. */
function schemaRuleTypes(): string[] {
  const defs = Object.values(profileSchema.$defs ?? {}) as Array<{
    properties?: { type?: { const?: string; enum?: string[] } };
  }>;
  return defs.flatMap((d) => {
    const type = d.properties?.type;
    return type?.const !== undefined ? [type.const] : (type?.enum ?? []);
  });
}

describe('rule registry', () => {
  it('has exactly the rule types of the profile schema', () => {
    expect([...RULE_TYPES].sort()).toEqual(schemaRuleTypes().sort());
  });

  it('names each event kind for at most one rule type', () => {
    const judged = RULE_TYPES.flatMap((t) => RULES[t].events ?? []);
    expect(judged).toContain('reconstructed_over');
    expect(new Set(judged).size).toBe(judged.length);
  });
});
