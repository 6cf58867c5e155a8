// The multipart form of a submission: exactly one file part (stored as it arrives) and up to
// MAX_FIELDS fields, validated by the JSON body's rules. The body is bounded as a whole, and a
// refused one is answered after its rest is read (bounded), so the client sees the answer.

import { Ajv } from 'ajv';
import type { FastifyRequest } from 'fastify';
import type { FromSchema } from 'json-schema-to-ts';
import type { IncomingMessage } from 'node:http';
import { EarmarkError } from '../errors/index.ts';
import type { StoredFile } from '../storage/index.ts';
import type { AppDeps } from './deps.ts';
import * as S from './schemas.ts';
import type { SubmitInput } from './submit.ts';
import { poisonKeyOf, validationProblem } from './validation.ts';

const ajv = new Ajv({ allErrors: false });
/** A form's fields: the JSON body's rules, with the file in place of sourceUrl. */
const { sourceUrl: _sourceUrl, ...formProperties } = S.SubmitJson.properties;
const SubmitFields = { ...S.SubmitJson, required: ['profile'], properties: formProperties } as const;
const validateFields = ajv.compile<FromSchema<typeof SubmitFields>>({
  ...SubmitFields,
  properties: { ...formProperties, sourceUrl: false },
});

const MAX_FIELDS = 10;

const cleanName = (name: string | undefined) =>
  (name ?? 'upload').replace(/[^\w .()-]/g, '_').slice(0, 200) || 'upload';

/** Room for the form's other parts and boundaries on top of the file's limit. */
const FORM_SLACK_BYTES = 1024 * 1024;

/** The whole multipart body is bounded too: an endless one (chunked, never terminated) whose
 * bytes are not a file part (a huge preamble or field) would otherwise be read for ever. */
function bodyBudget(request: FastifyRequest, maxBytes: number): { exceeded: Promise<never>; stop(): void } {
  let received = 0;
  let fail: (error: EarmarkError) => void = () => undefined;
  const exceeded = new Promise<never>((_resolve, reject) => {
    fail = reject;
  });
  exceeded.catch(() => undefined);
  const onData = (chunk: Buffer) => {
    received += chunk.length;
    if (received > maxBytes) {
      request.raw.off('data', onData);
      fail(
        new EarmarkError('payload_too_large', `the request body is larger than ${maxBytes} bytes`, {
          limitBytes: maxBytes,
        }),
      );
    }
  };
  // Added after parts() has piped the body into the parser, so no byte is missed by either.
  request.raw.on('data', onData);
  return { exceeded, stop: () => request.raw.off('data', onData) };
}

const DRAIN_BEFORE_ANSWER_BYTES = 8 * 1024 * 1024;

/** Reads and drops the rest of a refused body, up to maxBytes and while it keeps coming: a
 * client that stalls gets its answer after idleMs all the same. */
function drainBeforeAnswer(raw: IncomingMessage, maxBytes: number, idleMs: number): Promise<void> {
  return new Promise((resolve) => {
    if (raw.complete || raw.destroyed) {
      resolve();
      return;
    }
    let drained = 0;
    const done = () => {
      clearTimeout(timer);
      raw.off('data', onData).off('end', done).off('close', done);
      raw.pause();
      resolve();
    };
    const onData = (chunk: Buffer) => {
      drained += chunk.length;
      if (drained > maxBytes) done();
      else timer.refresh();
    };
    const timer = setTimeout(done, idleMs);
    raw.on('data', onData).once('end', done).once('close', done);
    raw.resume();
  });
}

export async function readMultipart(
  deps: AppDeps,
  request: FastifyRequest,
  limitBytes: number,
  drainIdleMs: number,
): Promise<{ stored: StoredFile; fileName: string; input: SubmitInput }> {
  let stored: StoredFile | null = null;
  let fileName = 'upload';
  let problem: EarmarkError | null = null;
  const fields: Record<string, string> = {};
  // Without a boundary the parser cannot start; say so instead of a parser error.
  if (!/;\s*boundary=/i.test(String(request.headers['content-type'] ?? ''))) {
    throw new EarmarkError('validation_failed', 'multipart/form-data needs a boundary parameter', {
      field: 'content-type',
    });
  }
  const parts = request.parts()[Symbol.asyncIterator]();
  const budget = bodyBudget(request, limitBytes + FORM_SLACK_BYTES);
  try {
    for (;;) {
      const next = await Promise.race([parts.next(), budget.exceeded]);
      if (next.done) break;
      const part = next.value;
      if (part.type === 'file') {
        const file = part;
        if (file.fieldname !== 'file' || stored || problem) {
          file.file.resume();
          problem ??= new EarmarkError('validation_failed', 'send exactly one file part, named "file"', {
            field: file.fieldname,
          });
          continue;
        }
        // A refused or failed store is answered after the rest of the body is read (no reset).
        stored = await deps.storage
          .saveUpload(file.file, limitBytes, () => file.file.truncated)
          .catch((error: unknown) => {
            problem ??=
              error instanceof EarmarkError
                ? error
                : new EarmarkError('storage_unavailable', 'the upload could not be stored');
            return null;
          });
        // Over the limit: answer now rather than read a body that may never end.
        const refused = problem as EarmarkError | null;
        if (refused?.code === 'payload_too_large') throw refused;
        fileName = cleanName(file.filename);
      } else if (Object.keys(fields).length >= MAX_FIELDS) {
        problem ??= new EarmarkError('validation_failed', `the form has more than ${MAX_FIELDS} fields`, {
          field: part.fieldname,
        });
      } else {
        fields[part.fieldname] = String(part.value);
      }
    }
    if (problem) throw problem;
    if (!stored)
      throw new EarmarkError('validation_failed', 'the multipart body has no "file" part', { field: 'file' });
    const input: Record<string, unknown> = { ...fields };
    if (fields.metadata !== undefined) {
      try {
        input.metadata = JSON.parse(fields.metadata);
      } catch {
        throw new EarmarkError('validation_failed', 'metadata is not valid JSON', { field: 'metadata' });
      }
      // The JSON body parser's rule, stricter: metadata is a flat map of strings.
      const poison = poisonKeyOf(input.metadata, true);
      if (poison)
        throw new EarmarkError('validation_failed', `metadata has a "${poison}" key, which is not allowed`, {
          field: `metadata.${poison}`,
        });
    }
    if (!validateFields(input)) throw validationProblem(validateFields.errors, 'body');
    return { stored, fileName, input };
  } catch (error) {
    if (stored) await deps.storage.remove(stored.key).catch(() => undefined);
    if (error instanceof EarmarkError && error.code === 'payload_too_large') {
      request.raw.unpipe();
      // A declared body a little over the limit is read to its end first: most clients read the
      // answer only once they have sent everything. An endless or far larger one is answered now.
      const declared = Number(request.headers['content-length'] ?? NaN);
      if (declared <= limitBytes + FORM_SLACK_BYTES + DRAIN_BEFORE_ANSWER_BYTES)
        await drainBeforeAnswer(request.raw, DRAIN_BEFORE_ANSWER_BYTES, drainIdleMs);
    } else {
      // A multipart limit stops the parser mid-body: read the rest (bounded by the idle and
      // request timeouts) so the client gets the answer instead of a broken pipe.
      request.raw.resume();
    }
    throw error;
  } finally {
    budget.stop();
  }
}
