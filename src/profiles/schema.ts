// Profile validation: the JSON Schema (openapi/profile.schema.json, generated from types.ts by
// profile-schema.ts) first, then the few rules a schema cannot say cleanly (either-or limits,
// min <= max, unique ids, one analysis setting).
// Every failure is an EarmarkError('invalid_profile') whose details.field is a JSON path.

import { readFileSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { Ajv2020, type ErrorObject } from 'ajv/dist/2020.js';
import { EarmarkError } from '../errors/index.ts';
import { projectFileUrl } from '../config/paths.ts';
import { ruleSpec, type ProfileIssue } from './rules/index.ts';
import type { Profile, Rule } from './types.ts';

export const PROFILE_SCHEMA_URL = projectFileUrl('openapi/profile.schema.json');
export const profileSchema: Record<string, unknown> = JSON.parse(readFileSync(PROFILE_SCHEMA_URL, 'utf8'));

const ajv = new Ajv2020({ allErrors: true, discriminator: true, strict: true });
const validateSchema = ajv.compile<Profile>(profileSchema);

export type { ProfileIssue };

/** "/rules/2/maxDbtp" -> "rules[2].maxDbtp"; the root is "profile". */
export function jsonPointerToPath(pointer: string, child?: string): string {
  const parts = pointer
    .split('/')
    .slice(1)
    .map((p) => p.replace(/~1/g, '/').replace(/~0/g, '~'));
  if (child !== undefined) parts.push(child);
  let path = '';
  for (const part of parts) path += /^\d+$/.test(part) ? `[${part}]` : path === '' ? part : `.${part}`;
  return path === '' ? 'profile' : path;
}

function issueFromAjv(e: ErrorObject): ProfileIssue {
  const params: Record<string, unknown> = e.params;
  if (e.keyword === 'additionalProperties') {
    const field = jsonPointerToPath(e.instancePath, String(params.additionalProperty));
    return { field, message: `${field} is not a known field` };
  }
  if (e.keyword === 'required') {
    const field = jsonPointerToPath(e.instancePath, String(params.missingProperty));
    return { field, message: `${field} is required` };
  }
  if (e.keyword === 'dependentRequired') {
    const field = jsonPointerToPath(e.instancePath, String(params.missingProperty));
    return { field, message: `${field} is required when ${String(params.property)} is given` };
  }
  const field = jsonPointerToPath(e.instancePath);
  if (e.keyword === 'discriminator')
    return {
      field: jsonPointerToPath(e.instancePath, 'type'),
      message: `${jsonPointerToPath(e.instancePath, 'type')} is not a known rule type`,
    };
  const allowed = Array.isArray(params.allowedValues) ? `: one of ${params.allowedValues.join(', ')}` : '';
  return { field, message: `${field} ${e.message ?? 'is invalid'}${allowed}` };
}

/** Rules feeding one analysis setting (one clipping detector, one silence threshold) must agree. */
function settingIssues(rules: Rule[]): ProfileIssue[] {
  const issues: ProfileIssue[] = [];
  const seen = new Map<string, { value: number; at: string }>();
  rules.forEach((rule, i) => {
    for (const { setting, field, value } of ruleSpec(rule).settings?.(rule, `rules[${i}]`) ?? []) {
      if (value === undefined) continue;
      const first = seen.get(setting);
      if (!first) seen.set(setting, { value, at: field });
      else if (first.value !== value)
        issues.push({
          field,
          message: `${field} is ${value} but ${first.at} is ${first.value}: one analysis runs with one value`,
        });
    }
  });
  return issues;
}

/** The profile when it matches the schema (null otherwise), and all its problems. */
function examine(value: unknown): { profile: Profile | null; issues: ProfileIssue[] } {
  if (!validateSchema(value)) return { profile: null, issues: (validateSchema.errors ?? []).map(issueFromAjv) };
  const profile = value;
  const issues: ProfileIssue[] = [];
  const ids = new Map<string, number>();
  profile.rules.forEach((rule, i) => {
    const earlier = ids.get(rule.id);
    if (earlier !== undefined)
      issues.push({ field: `rules[${i}].id`, message: `rules[${i}].id "${rule.id}" repeats rules[${earlier}].id` });
    else ids.set(rule.id, i);
    issues.push(...(ruleSpec(rule).issues?.(rule, `rules[${i}]`) ?? []));
  });
  return { profile, issues: [...issues, ...settingIssues(profile.rules)] };
}

/** All problems of a candidate profile; empty when it is valid. */
export function profileIssues(value: unknown): ProfileIssue[] {
  return examine(value).issues;
}

/** Validates and returns the profile; throws invalid_profile naming the first bad field (all in details.issues). */
export function parseProfile(value: unknown, origin = 'profile'): Profile {
  const { profile, issues } = examine(value);
  if (profile === null || issues.length > 0) {
    const first = issues[0] ?? { field: 'profile', message: 'profile does not match the profile schema' };
    const more = issues.length > 1 ? ` (and ${issues.length - 1} more)` : '';
    throw new EarmarkError('invalid_profile', `${origin}: ${first.message}${more}`, { field: first.field, issues });
  }
  return structuredClone(profile);
}

export async function loadProfileFile(path: string): Promise<Profile> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (cause) {
    throw new EarmarkError('file_not_found', `cannot read profile ${path}`, { field: 'profile' }, { cause });
  }
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch (cause) {
    throw new EarmarkError(
      'invalid_profile',
      `${path} is not valid JSON: ${cause instanceof Error ? cause.message : String(cause)}`,
      { field: 'profile' },
      { cause },
    );
  }
  return parseProfile(json, path);
}
