// The child of one batch lane (batch-lane.ts), forked with an IPC channel: started once, it checks
// file after file (checkOneFile, the profile resolved once) and answers each with the summary the
// batch keeps or the file's error. A crash ends only this child; the lane reports the file and
// starts another. It exits when its parent goes: the analysis awaits its reads block by block, so
// 'disconnect' is heard mid-file too.
import { parseArgs } from 'node:util';
import { toWireError } from '../errors/index.ts';
import { summarise } from '../exports/junit.ts';
import { frameRate, resolveProfile } from '../profiles/index.ts';
import { parseRequest, type LaneReply, type LaneRequest } from './batch-wire.ts';
import { checkOneFile } from './check-one.ts';
import { layoutOption } from './layout-option.ts';
import { threadsOption } from './threads.ts';

/** Fault tests only: `<crash|hang|spin>:<text>` crashes on, never answers for, or spins forever on a file whose path holds the text. */
export const LANE_FAULT_ENV = 'EARMARK_TEST_LANE_FAULT';

const send = process.send?.bind(process);
if (!send) {
  process.stderr.write('batch-child runs only as a child of `earmark check` on many files\n');
  process.exit(3);
}
process.once('disconnect', () => process.exit(1));

const { values } = parseArgs({
  options: {
    profile: { type: 'string', default: '' },
    fps: { type: 'string' },
    layout: { type: 'string' },
    threads: { type: 'string' },
  },
});
const settings = (async () => {
  const fps = values.fps === undefined ? undefined : frameRate(values.fps, 'fps').id;
  const layout = layoutOption(values);
  return {
    profile: await resolveProfile(values.profile),
    options: { ...(fps ? { fps } : {}), ...(layout ? { layout } : {}), threads: threadsOption(values.threads) },
  };
})();
// A bad setting is every file's error, answered per file.
settings.catch(() => {});

async function testFault(file: string): Promise<void> {
  const [kind, text] = (process.env[LANE_FAULT_ENV] ?? '').split(/:(.*)/s);
  if (!text || !file.includes(text)) return;
  if (kind === 'crash') process.abort();
  if (kind === 'hang') await new Promise(() => {});
  if (kind === 'spin') for (;;);
}

async function answer(request: LaneRequest): Promise<LaneReply> {
  try {
    const { profile, options } = await settings;
    await testFault(request.file);
    const report = summarise(await checkOneFile(request.file, profile, options));
    return { id: request.id, rssBytes: process.memoryUsage.rss(), report };
  } catch (thrown) {
    return { id: request.id, rssBytes: process.memoryUsage.rss(), error: toWireError(thrown) };
  }
}

// The lane sends one file at a time; a chain keeps answers in order all the same.
let queue = Promise.resolve();
process.on('message', (message: unknown) => {
  const request = parseRequest(message);
  if (!request) return;
  queue = queue.then(async () => {
    send(await answer(request));
  });
});
