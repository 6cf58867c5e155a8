// openapi/profile.schema.json is generated from the Profile type (src/profiles/types.ts): the
// committed file must be what `npm run openapi` writes, so the types and the validation cannot drift.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { profileSchema } from '../../src/profiles/index.ts';
import { generateProfileSchema } from '../../src/profiles/profile-schema.ts';

const committed = JSON.parse(readFileSync(new URL('../../openapi/profile.schema.json', import.meta.url), 'utf8'));

describe('openapi/profile.schema.json', () => {
  it('is what `npm run openapi` generates from src/profiles/types.ts', () => {
    expect(committed).toEqual(generateProfileSchema());
  }, 60_000);

  it('is the schema parseProfile validates with', () => {
    expect(profileSchema).toEqual(committed);
  });
});
