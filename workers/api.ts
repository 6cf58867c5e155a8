// `npm run api`: the HTTP API alone (workers run elsewhere against the same Redis and storage).
import { startApi } from '../src/api/server.ts';
import { boot, onShutdown } from './boot.ts';

const { config, log, stopRedis } = await boot('api');
const api = await startApi(config, log).catch((error: Error) => {
  log.fatal({ err: { message: error.message } }, 'the API could not start');
  process.exit(2);
});
onShutdown(log, async () => {
  await api.close();
  stopRedis();
});
