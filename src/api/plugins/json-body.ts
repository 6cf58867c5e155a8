// The JSON body parser. Fastify's own refuses prototype-poisoning keys but answers only "not valid
// JSON"; this one names the key. JSON.parse makes "__proto__" an own property (harmless) and
// the reviver refuses it, and a constructor.prototype pair, anywhere in the body. Plain
// "constructor" or "prototype" keys are left to the route schemas, which refuse unknown keys.

import fp from 'fastify-plugin';
import { EarmarkError } from '../../errors/index.ts';
import { poisonKeyOf } from '../validation.ts';

class PoisonKey extends Error {
  constructor(readonly key: string) {
    super(key);
  }
}

function revive(_key: string, value: unknown): unknown {
  const poison = poisonKeyOf(value);
  if (poison) throw new PoisonKey(poison);
  return value;
}

export function parseJsonBody(body: string): unknown {
  if (body.length === 0) throw new EarmarkError('validation_failed', 'the body is empty', { field: 'body' });
  try {
    return JSON.parse(body, revive);
  } catch (error) {
    if (error instanceof PoisonKey)
      throw new EarmarkError('validation_failed', `the body has a "${error.key}" key, which is not allowed`, {
        field: error.key,
      });
    throw new EarmarkError('validation_failed', 'the body is not valid JSON', { field: 'body' });
  }
}

export const jsonBodyPlugin = fp(
  async (app) => {
    app.removeContentTypeParser('application/json');
    app.addContentTypeParser('application/json', { parseAs: 'string' }, (_request, body, done) => {
      try {
        done(null, parseJsonBody(String(body)));
      } catch (error) {
        done(
          error instanceof Error ? error : new EarmarkError('validation_failed', 'the body is not valid JSON'),
          undefined,
        );
      }
    });
  },
  { name: 'earmark-json-body', fastify: '5.x' },
);
