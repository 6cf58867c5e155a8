// `npm run worker`: one worker process (scale out with more of these, on any host that sees
// the same Redis and storage volume).
import { startWorker } from '../src/worker/runtime.ts';
import { boot, onShutdown } from './boot.ts';

const { config, log, stopRedis } = await boot('worker');
const worker = await startWorker(config, log).catch((error: Error) => {
  log.fatal({ err: { message: error.message } }, 'the worker could not start');
  process.exit(2);
});
onShutdown(log, async () => {
  const { handedBack } = await worker.close();
  log.info({ handedBack }, 'worker stopped');
  stopRedis();
});
