// The analysis child's guard: a child that meets an uncaught exception after its parent has gone
// exits, instead of looping on a send that can never succeed.
import { fork } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { CHILD_GUARD_IMPORT } from '../../src/worker/child-guard.ts';

const dir = mkdtempSync(join(tmpdir(), 'earmark-child-guard-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// What BullMQ's child does (bullmq 5.x classes/main-base.js): report an uncaught exception to the
// parent, awaiting the send, then exit. Here the exception comes once the parent has disconnected.
const CHILD = `
const send = (msg) => new Promise((resolve, reject) => process.send(msg, (err) => (err ? reject(err) : resolve())));
process.on('uncaughtException', async (err) => { await send({ cmd: 'failed', value: String(err) }); process.exit(); });
process.on('message', () => {});
process.on('disconnect', () => setTimeout(() => { throw new Error('after the parent left'); }, 20));
process.send('ready');
`;

describe('analysis child guard', () => {
  it('ends a child whose uncaught exception comes after its parent left (it would loop without it)', async () => {
    const file = join(dir, 'child.mjs');
    writeFileSync(file, CHILD);
    const child = fork(file, [], { execArgv: ['--import', CHILD_GUARD_IMPORT], stdio: 'ignore' });
    const exited = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
    await new Promise((resolve) => child.once('message', resolve));
    child.disconnect();
    expect(await exited).toBe(1);
  });
});
