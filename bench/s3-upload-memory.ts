// The API's memory while a large upload streams into the S3 backend: s3rver (a child process,
// loopback, its own temp folder), the API as its own process (`workers/api.ts`, a private Redis),
// and curl sending a multipart upload of BENCH_S3_UPLOAD_MIB (default 1024) random MiB. The API's
// RSS is read from /proc every 50 ms; the peak and the resting RSS before the upload are printed,
// with the object's size in the bucket. `node bin/run.js bench/s3-upload-memory.ts`
import { execFileSync, spawn } from 'node:child_process';
import { once } from 'node:events';
import { createWriteStream, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { randomBytes } from 'node:crypto';

const MIB = 1024 * 1024;
const uploadMib = Number(process.env.BENCH_S3_UPLOAD_MIB ?? 1024);
const work = mkdtempSync(join(tmpdir(), 'earmark-s3-bench-'));
const bucket = 'earmark-bench';
const apiKey = 'bench-submit-key-0000000001';

const s3rver = spawn(
  process.execPath,
  [
    '--input-type=module',
    '-e',
    `import S3rver from 's3rver';
     const s = new S3rver({ address: '127.0.0.1', port: 0, silent: true, directory: ${JSON.stringify(join(work, 's3'))},
       configureBuckets: [{ name: '${bucket}' }] });
     const { port } = await s.run();
     console.log(port);`,
  ],
  { stdio: ['ignore', 'pipe', 'inherit'] },
);
const [portLine] = await once(s3rver.stdout, 'data');
const endpoint = `http://127.0.0.1:${String(portLine).trim()}`;

const file = join(work, 'big.bin');
const out = createWriteStream(file);
for (let i = 0; i < uploadMib; i++) if (!out.write(randomBytes(MIB))) await once(out, 'drain');
out.end();
await once(out, 'finish');

// No REDIS_URL: the API's entrypoint starts a private redis-server.
const { REDIS_URL: _redisUrl, ...inherited } = process.env;
const env = {
  ...inherited,
  PORT: '0',
  HOST: '127.0.0.1',
  EARMARK_STORAGE_URL: `s3://${bucket}/bench`,
  EARMARK_STORAGE_DIR: join(work, 'api-local'),
  AWS_ENDPOINT_URL_S3: endpoint,
  AWS_REGION: 'us-east-1',
  AWS_ACCESS_KEY_ID: 'S3RVER',
  AWS_SECRET_ACCESS_KEY: 'S3RVER',
  EARMARK_S3_FORCE_PATH_STYLE: 'true',
  EARMARK_API_KEYS: JSON.stringify([{ key: apiKey, tenant: 'bench', scopes: ['submit', 'read'] }]),
  EARMARK_UPLOAD_LIMIT_BYTES: String((uploadMib + 1) * MIB),
  EARMARK_LOG_LEVEL: 'info',
};
const api = spawn(process.execPath, ['bin/run.js', 'workers/api.ts'], { env, stdio: ['ignore', 'pipe', 'inherit'] });
let apiUrl = '';
for await (const chunk of api.stdout) {
  const match = /listening at (http:\/\/[0-9.:]+)/.exec(String(chunk));
  if (match) {
    apiUrl = match[1].replace('0.0.0.0', '127.0.0.1');
    break;
  }
}
api.stdout.resume();
const rssMib = () => Number(/VmRSS:\s+(\d+)/.exec(readFileSync(`/proc/${api.pid}/status`, 'utf8'))?.[1] ?? 0) / 1024;
await new Promise((resolve) => setTimeout(resolve, 1000));
const restingMib = rssMib();
let peakMib = restingMib;
const sampler = setInterval(() => {
  peakMib = Math.max(peakMib, rssMib());
}, 50);
const started = performance.now();
// curl as a child of its own: a synchronous call would stop the sampler.
const curl = spawn(
  'curl',
  [
    '-sS',
    '-H',
    `authorization: Bearer ${apiKey}`,
    '-F',
    'profile=ebu-r128',
    '-F',
    `file=@${file}`,
    `${apiUrl}/v1/jobs`,
  ],
  { stdio: ['ignore', 'pipe', 'inherit'] },
);
let answer = '';
curl.stdout.on('data', (chunk) => {
  answer += String(chunk);
});
await once(curl, 'exit');
const seconds = (performance.now() - started) / 1000;
clearInterval(sampler);
const stored = execFileSync('find', [join(work, 's3', bucket), '-type', 'f', '-size', `+${uploadMib - 1}M`], {
  encoding: 'utf8',
});
console.log(answer.trim());
console.log(
  `[bench s3-upload] ${uploadMib} MiB in ${seconds.toFixed(1)} s (${(uploadMib / seconds).toFixed(0)} MiB/s): API RSS resting ${restingMib.toFixed(0)} MiB, peak ${peakMib.toFixed(0)} MiB; object files of that size in the bucket folder: ${stored.trim().split('\n').filter(Boolean).length}`,
);
api.kill('SIGTERM');
s3rver.kill('SIGTERM');
await Promise.all([once(api, 'exit'), once(s3rver, 'exit')]);
rmSync(work, { recursive: true, force: true });
