// Delivery profiles per tenant: built-ins are read-only and shared; custom profiles live in
// Redis, one list of versions per id. Every PUT appends a version ("<n>.0.0"), so a report's
// profile.version always names content that never changes. DELETE hides the id but keeps the
// versions, so reports that name them stay explainable.

import type { Redis } from 'ioredis';
import { EarmarkError } from '../errors/index.ts';
import { BUILTIN_PROFILES, parseProfile, type Profile } from '../profiles/index.ts';

export interface ProfileEntry {
  profile: Profile;
  builtin: boolean;
  versions: number;
}

/** Equal apart from the version: compared as canonical JSON (keys sorted at every level). */
function sameContent(a: Profile, b: Profile): boolean {
  const canonical = (value: unknown): unknown => {
    if (Array.isArray(value)) return value.map(canonical);
    if (value && typeof value === 'object')
      return Object.fromEntries(
        Object.entries(value)
          .sort(([x], [y]) => x.localeCompare(y))
          .map(([k, v]) => [k, canonical(v)]),
      );
    return value;
  };
  return JSON.stringify(canonical({ ...a, version: '' })) === JSON.stringify(canonical({ ...b, version: '' }));
}

export class ProfileStore {
  constructor(
    readonly redis: Redis,
    readonly prefix: string,
  ) {}

  private versionsKey(tenant: string, id: string): string {
    return `${this.prefix}:svc:profile:${tenant}:${id}`;
  }

  private liveKey(tenant: string): string {
    return `${this.prefix}:svc:profiles:${tenant}`;
  }

  static isBuiltin(id: string): boolean {
    return BUILTIN_PROFILES.some((p) => p.id === id);
  }

  async list(tenant: string): Promise<ProfileEntry[]> {
    const ids = (await this.redis.smembers(this.liveKey(tenant))).sort();
    const custom = await Promise.all(ids.map((id) => this.get(tenant, id)));
    return [
      ...BUILTIN_PROFILES.map((p) => ({ profile: structuredClone(p) as Profile, builtin: true, versions: 1 })),
      ...custom.filter((e): e is ProfileEntry => e !== null),
    ];
  }

  /** The current version, or null (unknown or deleted). */
  async get(tenant: string, id: string): Promise<ProfileEntry | null> {
    const builtin = BUILTIN_PROFILES.find((p) => p.id === id);
    if (builtin) return { profile: structuredClone(builtin) as Profile, builtin: true, versions: 1 };
    if (!(await this.redis.sismember(this.liveKey(tenant), id))) return null;
    const [last, count] = await Promise.all([
      this.redis.lindex(this.versionsKey(tenant, id), -1),
      this.redis.llen(this.versionsKey(tenant, id)),
    ]);
    return last
      ? { profile: parseProfile(JSON.parse(last), `stored profile ${id}`), builtin: false, versions: count }
      : null;
  }

  /** One version ("<n>.0.0", as put() numbers them) of a live profile, or null (unknown id or version). */
  async version(tenant: string, id: string, version: string): Promise<ProfileEntry | null> {
    const current = await this.get(tenant, id);
    if (!current || current.profile.version === version) return current;
    const n = /^([1-9]\d{0,8})\.0\.0$/.exec(version);
    if (current.builtin || !n || Number(n[1]) > current.versions) return null;
    const stored = await this.redis.lindex(this.versionsKey(tenant, id), Number(n[1]) - 1);
    return stored
      ? {
          profile: parseProfile(JSON.parse(stored), `stored profile ${id}`),
          builtin: false,
          versions: current.versions,
        }
      : null;
  }

  /** Validates (invalid_profile naming the field) and stores a new version. */
  async put(tenant: string, id: string, body: unknown): Promise<ProfileEntry> {
    if (ProfileStore.isBuiltin(id))
      throw new EarmarkError('forbidden', `profile "${id}" is built in and read-only; store a copy under another id`, {
        field: 'id',
      });
    if (!body || typeof body !== 'object' || Array.isArray(body))
      throw new EarmarkError('invalid_profile', 'the profile must be a JSON object', { field: 'profile' });
    const input = body as Record<string, unknown>;
    if (input.id !== undefined && input.id !== id)
      throw new EarmarkError('invalid_profile', `profile.id "${String(input.id)}" differs from the id in the path`, {
        field: 'id',
      });
    const key = this.versionsKey(tenant, id);
    const [last, stored] = await Promise.all([this.redis.lindex(key, -1), this.redis.llen(key)]);
    const next = stored + 1;
    const profile = parseProfile({ ...input, id, version: `${next}.0.0` });
    // Saving the same content again is not a new version: reports keep naming the one they used.
    if (last !== null) {
      const previous = parseProfile(JSON.parse(last), `stored profile ${id}`);
      if (sameContent(previous, profile)) {
        await this.redis.sadd(this.liveKey(tenant), id);
        return { profile: previous, builtin: false, versions: stored };
      }
    }
    // RPUSH returns the new length: a concurrent PUT got the same number, so renumber ours.
    const length = await this.redis.rpush(key, JSON.stringify(profile));
    if (length !== next) {
      profile.version = `${length}.0.0`;
      await this.redis.lset(key, length - 1, JSON.stringify(profile));
    }
    await this.redis.sadd(this.liveKey(tenant), id);
    return { profile, builtin: false, versions: length };
  }

  async remove(tenant: string, id: string): Promise<boolean> {
    if (ProfileStore.isBuiltin(id))
      throw new EarmarkError('forbidden', `profile "${id}" is built in and read-only`, { field: 'id' });
    return (await this.redis.srem(this.liveKey(tenant), id)) === 1;
  }
}
