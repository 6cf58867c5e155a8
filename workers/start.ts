// `npm start`: the API and one worker in one process (the analysis itself still runs in the
// worker's sandboxed child processes, off this event loop).
import { startApi } from '../src/api/server.ts';
import { startWorker } from '../src/worker/runtime.ts';
import { boot, onShutdown } from './boot.ts';

const { config, log, stopRedis } = await boot('start');
try {
  const worker = await startWorker(config, log.child({ component: 'worker' }));
  const api = await startApi(config, log);
  log.info({ url: api.url }, 'Earmark is listening');
  onShutdown(log, async () => {
    await api.close();
    await worker.close();
    stopRedis();
  });
} catch (error) {
  log.fatal({ err: { message: (error as Error).message } }, 'Earmark could not start');
  stopRedis();
  process.exit(2);
}
