// An operator's sign-off of a warn or fail verdict: recorded in Redis with who and when, then
// announced to the job's callbackUrl through the webhook queue, so the worker's delivery (signed,
// retried with backoff, each attempt logged on the job) carries it like the completion event.
// A pass needs no sign-off and a failed job has no verdict: both are refused (409).

import { EarmarkError } from '../errors/index.ts';
import { DELIVER_WEBHOOK_V1 } from '../queue/contract.ts';
import { jobView, type JobView } from '../queue/job-view.ts';
import type { WebhookQueue } from '../queue/queues.ts';
import type { SignOff } from '../queue/signoffs.ts';
import type { AppDeps } from './deps.ts';
import type { Principal } from './plugins/auth.ts';

export interface SignOffInput {
  decision: 'accept' | 'reject';
  note?: string;
  operator?: string;
}

/** Stable per sign-off: the webhook job's id (BullMQ drops a second add) and `Earmark-Delivery`. */
export const signOffDeliveryId = (jobId: string, number: number): string => `dlv_${jobId}_s${number}`;

export async function signOffJob(
  deps: AppDeps,
  webhooks: WebhookQueue,
  principal: Principal,
  jobId: string,
  input: SignOffInput,
): Promise<SignOff> {
  const { job, state, deliveries } = await deps.jobs.load(principal.tenant, jobId);
  if (state !== 'completed')
    throw new EarmarkError(
      'signoff_not_allowed',
      state === 'failed'
        ? `job ${jobId} failed, so it has no verdict to sign off`
        : `job ${jobId} is ${state}: sign off its verdict once it has completed`,
    );
  const verdict = job.returnvalue?.verdict;
  if (verdict !== 'warn' && verdict !== 'fail')
    throw new EarmarkError('signoff_not_allowed', `job ${jobId} passed: a pass verdict needs no sign-off`);
  const note = input.note?.trim() ? input.note.trim() : null;
  // Overriding a fail is the decision that must say why; the others may.
  if (verdict === 'fail' && input.decision === 'accept' && note === null)
    throw new EarmarkError('validation_failed', 'accepting a fail verdict needs a note that says why', {
      field: 'note',
    });
  const signOff = await deps.store.signOffs.add(jobId, {
    decision: input.decision,
    note,
    verdict,
    by: { tenant: principal.tenant, keyId: principal.keyId, operator: input.operator?.trim() || null },
    at: new Date().toISOString(),
  });
  const url = job.data.callbackUrl;
  if (url) {
    const deliveryId = signOffDeliveryId(jobId, signOff.number);
    const view: JobView = { ...jobView(job, state, deliveries), signOff };
    const body = JSON.stringify({
      event: 'job.signed_off',
      deliveryId,
      signOff,
      job: { ...view, callback: { url, deliveries: [] } },
    });
    await webhooks.add(
      DELIVER_WEBHOOK_V1,
      { jobId, tenant: principal.tenant, url, event: 'job.signed_off', deliveryId, body },
      { jobId: deliveryId },
    );
  }
  return signOff;
}
