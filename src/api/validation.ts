// Request validation helpers shared by fastify's validator and the routes' own checks: the
// field a schema error names, and the prototype-poisoning keys every parsed body is refused for.

import { EarmarkError } from '../errors/index.ts';

/** A schema error as ajv and fastify report it. */
export interface SchemaError {
  instancePath: string;
  params: Record<string, unknown>;
  message?: string;
}

/** Field names as the client wrote them: "sourceUrl", "limit", "metadata.desk". */
export function fieldOf(error: SchemaError | undefined, fallback: string): string {
  const parts = (error?.instancePath ?? '').split('/').filter(Boolean);
  const named = error?.params.missingProperty ?? error?.params.additionalProperty;
  if (typeof named === 'string') parts.push(named);
  return parts.join('.') || fallback;
}

/** The first schema error as a validation_failed problem naming its field. */
export function validationProblem(errors: readonly SchemaError[] | null | undefined, fallback: string): EarmarkError {
  const first = errors?.[0];
  const field = fieldOf(first, fallback);
  const said =
    typeof first?.params.additionalProperty === 'string' ? 'is not a known field' : (first?.message ?? 'is invalid');
  return new EarmarkError('validation_failed', `${field} ${said}`, { field });
}

const isObject = (value: unknown): value is object => value !== null && typeof value === 'object';

/**
 * The own key of `value` that could reach a prototype once the value is merged or spread:
 * "__proto__", or "constructor" holding "prototype". With `reservedNames`, a "constructor" or
 * "prototype" key of any value counts too (flat string maps, where neither has a use).
 */
export function poisonKeyOf(value: unknown, reservedNames = false): string | null {
  if (!isObject(value)) return null;
  for (const key of Object.keys(value)) {
    if (key === '__proto__') return key;
    if (reservedNames && (key === 'constructor' || key === 'prototype')) return key;
    if (key === 'constructor') {
      const held: unknown = Reflect.get(value, key);
      if (isObject(held) && Object.hasOwn(held, 'prototype')) return key;
    }
  }
  return null;
}
