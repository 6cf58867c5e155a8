// Profile validation: the JSON Schema (openapi/profile.schema.json, generated from types.ts by
// profile-schema.ts) first, then the few rules a schema cannot say cleanly (either-or limits,
// min <= max, unique ids, one analysis setting).
// Every failure is an EarmarkError('invalid_profile') whose details.field is a JSON path.

import { readFileSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import { Ajv2020, type ErrorObject } from 'ajv/dist/2020.js';
import { EarmarkError } from '../errors/index.ts';
import { projectFileUrl } from '../config/paths.ts';
import type { Profile, Rule } from './types.ts';

export const PROFILE_SCHEMA_URL = projectFileUrl('openapi/profile.schema.json');
export const profileSchema: Record<string, unknown> = JSON.parse(readFileSync(PROFILE_SCHEMA_URL, 'utf8'));

const ajv = new Ajv2020({ allErrors: true, discriminator: true, strict: true });
const validateSchema = ajv.compile(profileSchema);

export interface ProfileIssue { field: string; message: string }

/** "/rules/2/maxDbtp" -> "rules[2].maxDbtp"; the root is "profile". */
export function jsonPointerToPath(pointer: string, child?: string): string {
  const parts = pointer.split('/').slice(1).map((p) => p.replace(/~1/g, '/').replace(/~0/g, '~'));
  if (child !== undefined) parts.push(child);
  let path = '';
  for (const part of parts) path += /^\d+$/.test(part) ? `[${part}]` : path === '' ? part : `.${part}`;
  return path === '' ? 'profile' : path;
}

function issueFromAjv(e: ErrorObject): ProfileIssue {
  const params = e.params as Record<string, unknown>;
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
  if (e.keyword === 'discriminator') return { field: jsonPointerToPath(e.instancePath, 'type'), message: `${jsonPointerToPath(e.instancePath, 'type')} is not a known rule type` };
  const allowed = Array.isArray(params.allowedValues) ? `: one of ${params.allowedValues.join(', ')}` : '';
  return { field, message: `${field} ${e.message ?? 'is invalid'}${allowed}` };
}

const has = (v: unknown) => v !== undefined;

function ruleIssues(rule: Rule, at: string): ProfileIssue[] {
  const issues: ProfileIssue[] = [];
  const order = (minKey: string, maxKey: string, min: number | undefined, max: number | undefined) => {
    if (min !== undefined && max !== undefined && min > max) issues.push({ field: `${at}.${minKey}`, message: `${at}.${minKey} (${min}) is above ${at}.${maxKey} (${max})` });
  };
  const needOne = (keys: string[], values: unknown[]) => {
    if (!values.some(has)) issues.push({ field: `${at}.${keys[0]}`, message: `${at}.${keys[0]} is missing: ${at} needs at least one of ${keys.join(', ')}` });
  };
  switch (rule.type) {
    case 'integrated-loudness': {
      const range = has(rule.minLufs) || has(rule.maxLufs);
      if (!range && !has(rule.toleranceLu)) issues.push({ field: `${at}.toleranceLu`, message: `${at}.toleranceLu is missing: give targetLufs with toleranceLu, or minLufs/maxLufs` });
      if (range && has(rule.toleranceLu)) issues.push({ field: `${at}.toleranceLu`, message: `${at}.toleranceLu cannot be combined with minLufs/maxLufs; use one` });
      order('minLufs', 'maxLufs', rule.minLufs, rule.maxLufs);
      if (range && rule.targetLufs !== undefined && ((rule.minLufs ?? -Infinity) > rule.targetLufs || (rule.maxLufs ?? Infinity) < rule.targetLufs)) {
        issues.push({ field: `${at}.targetLufs`, message: `${at}.targetLufs lies outside minLufs..maxLufs` });
      }
      break;
    }
    case 'loudness-range': needOne(['minLu', 'maxLu'], [rule.minLu, rule.maxLu]); order('minLu', 'maxLu', rule.minLu, rule.maxLu); break;
    case 'head-silence': case 'tail-silence': case 'duration':
      needOne(['minSeconds', 'maxSeconds'], [rule.minSeconds, rule.maxSeconds]); order('minSeconds', 'maxSeconds', rule.minSeconds, rule.maxSeconds); break;
    case 'channels':
      needOne(['count', 'layout'], [rule.count, rule.layout]);
      if (rule.count !== undefined && rule.layout !== undefined && rule.layout.length !== rule.count) issues.push({ field: `${at}.layout`, message: `${at}.layout has ${rule.layout.length} channels, count says ${rule.count}` });
      break;
    default: break;
  }
  return issues;
}

/** Rules feeding one analysis setting (one clipping detector, one silence threshold) must agree. */
function settingIssues(rules: Rule[]): ProfileIssue[] {
  const issues: ProfileIssue[] = [];
  const seen = new Map<string, { value: number; at: string }>();
  const agree = (setting: string, value: number | undefined, at: string) => {
    if (value === undefined) return;
    const first = seen.get(setting);
    if (!first) seen.set(setting, { value, at });
    else if (first.value !== value) issues.push({ field: at, message: `${at} is ${value} but ${first.at} is ${first.value}: one analysis runs with one value` });
  };
  rules.forEach((rule, i) => {
    const at = `rules[${i}]`;
    if (rule.type === 'clipping') { agree('clipRun', rule.minRunSamples, `${at}.minRunSamples`); agree('clipThreshold', rule.thresholdDbfs, `${at}.thresholdDbfs`); }
    if (rule.type === 'silence-gap' || rule.type === 'head-silence' || rule.type === 'tail-silence') agree('silenceThreshold', rule.thresholdDbfs, `${at}.thresholdDbfs`);
    if (rule.type === 'phase') agree('phase', rule.minCorrelation, `${at}.minCorrelation`);
  });
  return issues;
}

/** All problems of a candidate profile; empty when it is valid. */
export function profileIssues(value: unknown): ProfileIssue[] {
  if (!validateSchema(value)) return (validateSchema.errors ?? []).map(issueFromAjv);
  const profile = value as unknown as Profile;
  const issues: ProfileIssue[] = [];
  const ids = new Map<string, number>();
  profile.rules.forEach((rule, i) => {
    const earlier = ids.get(rule.id);
    if (earlier !== undefined) issues.push({ field: `rules[${i}].id`, message: `rules[${i}].id "${rule.id}" repeats rules[${earlier}].id` });
    else ids.set(rule.id, i);
    issues.push(...ruleIssues(rule, `rules[${i}]`));
  });
  return [...issues, ...settingIssues(profile.rules)];
}

/** Validates and returns the profile; throws invalid_profile naming the first bad field (all in details.issues). */
export function parseProfile(value: unknown, origin = 'profile'): Profile {
  const issues = profileIssues(value);
  if (issues.length > 0) {
    const more = issues.length > 1 ? ` (and ${issues.length - 1} more)` : '';
    throw new EarmarkError('invalid_profile', `${origin}: ${issues[0].message}${more}`, { field: issues[0].field, issues });
  }
  return structuredClone(value) as Profile;
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
    throw new EarmarkError('invalid_profile', `${path} is not valid JSON: ${(cause as Error).message}`, { field: 'profile' }, { cause });
  }
  return parseProfile(json, path);
}
