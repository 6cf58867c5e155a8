// Operator sign-offs of a job's warn or fail verdict, one list per job (oldest first, the last 50):
// a later sign-off replaces the earlier one as the current decision, and the list keeps both.
// Kept for the retention period, like the job.

import type { Redis } from 'ioredis';
import { runScript, script, serviceKey } from './service-keys.ts';

export interface SignOff {
  /** 1 for the first sign-off of this job, then 2, 3, ... (also names its webhook delivery). */
  number: number;
  decision: 'accept' | 'reject';
  note: string | null;
  /** The verdict that was signed off, as the report gives it. */
  verdict: 'warn' | 'fail';
  /** Who: the API key's tenant and its digest prefix (never the key), and the name the operator gave. */
  by: { tenant: string; keyId: string; operator: string | null };
  at: string;
}

const MAX_KEPT = 50;

// The last entry of each list, in one command (a missing list answers nil in its place).
const LAST_OF_EACH = script(`
local out = {}
for i, key in ipairs(KEYS) do out[i] = redis.call('LINDEX', key, -1) end
return out
`);

/** A stored entry read back: checked field by field, so a damaged entry is an error, not a wrong record. */
export function parseSignOff(text: string): SignOff {
  const v: unknown = JSON.parse(text);
  if (
    typeof v === 'object' &&
    v !== null &&
    'number' in v &&
    typeof v.number === 'number' &&
    'decision' in v &&
    (v.decision === 'accept' || v.decision === 'reject') &&
    'note' in v &&
    (v.note === null || typeof v.note === 'string') &&
    'verdict' in v &&
    (v.verdict === 'warn' || v.verdict === 'fail') &&
    'by' in v &&
    typeof v.by === 'object' &&
    v.by !== null &&
    'tenant' in v.by &&
    typeof v.by.tenant === 'string' &&
    'keyId' in v.by &&
    typeof v.by.keyId === 'string' &&
    // Entries written before the operator's name was recorded have none.
    (!('operator' in v.by) || v.by.operator === null || typeof v.by.operator === 'string') &&
    'at' in v &&
    typeof v.at === 'string'
  )
    return {
      number: v.number,
      decision: v.decision,
      note: v.note,
      verdict: v.verdict,
      by: {
        tenant: v.by.tenant,
        keyId: v.by.keyId,
        operator: 'operator' in v.by && typeof v.by.operator === 'string' ? v.by.operator : null,
      },
      at: v.at,
    };
  throw new Error('a stored sign-off does not have the shape this version writes');
}

export class SignOffLog {
  constructor(
    private readonly redis: Redis,
    private readonly prefix: string,
    private readonly retentionSeconds: number,
  ) {}

  private key(jobId: string): string {
    return serviceKey(this.prefix, 'signoffs', jobId);
  }

  /** Appends a sign-off and returns it numbered (INCR, so concurrent ones never share a number). */
  async add(jobId: string, entry: Omit<SignOff, 'number'>): Promise<SignOff> {
    const key = this.key(jobId);
    const count = await this.redis.incr(`${key}:count`);
    const signOff: SignOff = { number: count, ...entry };
    await this.redis
      .multi()
      .rpush(key, JSON.stringify(signOff))
      .ltrim(key, -MAX_KEPT, -1)
      .expire(key, this.retentionSeconds)
      .expire(`${key}:count`, this.retentionSeconds)
      .exec();
    return signOff;
  }

  async history(jobId: string): Promise<SignOff[]> {
    return (await this.redis.lrange(this.key(jobId), 0, -1)).map(parseSignOff);
  }

  /** The current sign-off of each job, in one round trip (a listing's page: one pipeline, not one read per job). */
  async currentOf(jobIds: readonly string[]): Promise<Map<string, SignOff>> {
    const found = new Map<string, SignOff>();
    if (jobIds.length === 0) return found;
    const answers = await runScript(
      this.redis,
      LAST_OF_EACH,
      jobIds.map((id) => this.key(id)),
      [],
    );
    if (!Array.isArray(answers) || answers.length !== jobIds.length)
      throw new Error('the sign-off read script answered unexpectedly');
    answers.forEach((last: unknown, i) => {
      if (typeof last === 'string') found.set(jobIds[i], parseSignOff(last));
    });
    return found;
  }

  async current(jobId: string): Promise<SignOff | null> {
    const last = await this.redis.lindex(this.key(jobId), -1);
    return last ? parseSignOff(last) : null;
  }
}
