// Deadlines and typed errors against a real server, loopback only: a sourceUrl that drips or
// stalls, uploads that stall, are abandoned or never end, and requests the HTTP parser or router
// refuses. Deadlines are set small through the environment; no assertion on wall time.

import { mkdirSync, mkdtempSync, readdirSync, rmSync, utimesSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:http';
import { connect, type Socket } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pino from 'pino';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startApi } from '../../src/api/server.ts';
import { loadConfig } from '../../src/config/index.ts';
import { client, type Client } from '../service/client.ts';
import { KEYS, sleep, startService, testEnv, until, type TestService } from '../service/harness.ts';

const LIMIT = 1024 * 1024;
const BODY_TIMEOUT_MS = 1500;

let svc: TestService;
let api: Client;
let origin: Server;
let originUrl: string;
const hits = new Map<string, number>();

beforeAll(async () => {
  origin = createServer((req, res) => {
    hits.set(req.url ?? '', (hits.get(req.url ?? '') ?? 0) + 1);
    res.writeHead(200, { 'content-type': 'audio/wav', 'content-length': String(64 * 1024 * 1024) });
    if (req.url === '/drip.wav') {
      // 1 KiB every 0.2 s: never idle long enough for the idle timeout.
      const timer = setInterval(() => res.write(Buffer.alloc(1024)), 200);
      res.on('close', () => clearInterval(timer));
    } else if (req.url === '/cut.wav') {
      res.write(Buffer.alloc(100), () => res.destroy()); // the connection drops mid-file
    } else {
      res.write(Buffer.alloc(100)); // then nothing
    }
  });
  await new Promise<void>((resolve) => origin.listen(0, '127.0.0.1', resolve));
  originUrl = `http://127.0.0.1:${(origin.address() as { port: number }).port}`;
  svc = await startService({
    env: {
      EARMARK_RATE_LIMIT_PER_MINUTE: '0',
      EARMARK_UPLOAD_LIMIT_BYTES: String(LIMIT),
      EARMARK_BODY_TIMEOUT_MS: String(BODY_TIMEOUT_MS),
      EARMARK_FETCH_TIMEOUT_MS: '1000',
      EARMARK_FETCH_DEADLINE_MS: '2500',
      EARMARK_JOB_ATTEMPTS: '2',
      EARMARK_FETCH_LIMIT_BYTES: String(256 * LIMIT),
    },
  });
  api = client(svc.url);
});

afterAll(async () => {
  await svc?.close();
  origin?.closeAllConnections();
  await new Promise((resolve) => origin?.close(resolve));
});

const port = () => Number(new URL(svc.url).port);
const tmpFiles = () => readdirSync(join(svc.dir, 'tmp'));

/** A raw connection that collects everything the server sends and notes when it closes. */
function rawConnection(): Promise<{ socket: Socket; received: () => string; closed: Promise<void> }> {
  return new Promise((resolve, reject) => {
    const socket = connect(port(), '127.0.0.1');
    let text = '';
    socket.on('data', (chunk) => {
      text += chunk.toString('latin1');
      received.set(socket, text);
    });
    socket.on('error', () => undefined); // a reset after the answer is expected
    const closed = new Promise<void>((done) => socket.once('close', () => done()));
    socket.once('connect', () => resolve({ socket, received: () => text, closed }));
    socket.once('error', reject);
  });
}

const BOUNDARY = 'earmark-test-boundary';
const multipartHead = (contentLength: number | null) =>
  [
    'POST /v1/jobs HTTP/1.1',
    'Host: 127.0.0.1',
    `Authorization: Bearer ${KEYS.alpha}`,
    `Content-Type: multipart/form-data; boundary=${BOUNDARY}`,
    contentLength === null ? 'Transfer-Encoding: chunked' : `Content-Length: ${contentLength}`,
    '',
    '',
  ].join('\r\n');
const partsBefore = Buffer.from(
  `--${BOUNDARY}\r\nContent-Disposition: form-data; name="profile"\r\n\r\nebu-r128\r\n--${BOUNDARY}\r\nContent-Disposition: form-data; name="file"; filename="a.wav"\r\nContent-Type: audio/wav\r\n\r\n`,
);
const chunk = (bytes: Buffer) =>
  Buffer.concat([Buffer.from(`${bytes.length.toString(16)}\r\n`), bytes, Buffer.from('\r\n')]);
const statusOf = (text: string) => Number(/^HTTP\/1\.1 (\d{3})/.exec(text)?.[1] ?? 0);
const bodyOf = (text: string) => JSON.parse(text.slice(text.indexOf('\r\n\r\n') + 4)) as Record<string, unknown>;
/** Resolves once the data is taken, or when the server stops reading (a refused body): then
 * the caller looks at what came back. */
const write = (socket: Socket, data: Buffer | string) =>
  new Promise<void>((resolve) => {
    if (socket.destroyed || socket.write(data)) {
      resolve();
      return;
    }
    const done = () => {
      clearInterval(poll);
      socket.off('drain', done).off('close', done);
      resolve();
    };
    const poll = setInterval(() => {
      if (statusOf(received.get(socket) ?? '') !== 0) done();
    }, 20);
    socket.once('drain', done).once('close', done);
  });
const received = new WeakMap<Socket, string>();

async function jobOutcome(id: string) {
  return until(async () => {
    const body = (await api.get(`/v1/jobs/${id}`, KEYS.alpha)).body as {
      state: string;
      attemptsMade: number;
      error?: { code: string; message: string };
    };
    return body.state === 'failed' || body.state === 'completed' ? body : null;
  }, 200);
}

describe('sourceUrl deadlines', () => {
  it('a source dripping 1 KiB every 0.2 s fails as source_stalled after its retries (the overall deadline)', async () => {
    const submit = await api.postJson(
      '/v1/jobs',
      { sourceUrl: `${originUrl}/drip.wav`, profile: 'ebu-r128' },
      KEYS.alpha,
    );
    expect(submit.status).toBe(202);
    const job = await jobOutcome(submit.body.id);
    expect(job.state).toBe('failed');
    expect(job.error?.code).toBe('source_stalled');
    expect(job.attemptsMade).toBe(2); // transient: retried
    expect(hits.get('/drip.wav')).toBe(2);
    expect(tmpFiles()).toEqual([]);
    console.log(`[deadlines drip] ${job.error?.code} after ${job.attemptsMade} attempts: ${job.error?.message}`);
  }, 30_000);

  it('a source that stalls after 100 bytes fails as source_stalled (idle timeout), retried, not validation_failed', async () => {
    const submit = await api.postJson(
      '/v1/jobs',
      { sourceUrl: `${originUrl}/stall.wav`, profile: 'ebu-r128' },
      KEYS.alpha,
    );
    const job = await jobOutcome(submit.body.id);
    expect(job.error?.code).toBe('source_stalled');
    expect(job.attemptsMade).toBe(2);
    expect(hits.get('/stall.wav')).toBe(2);
  }, 30_000);

  it('a source whose connection drops mid-file fails as source_fetch_failed, retried (the network, not the client)', async () => {
    const submit = await api.postJson(
      '/v1/jobs',
      { sourceUrl: `${originUrl}/cut.wav`, profile: 'ebu-r128' },
      KEYS.alpha,
    );
    const job = await jobOutcome(submit.body.id);
    expect(job.error?.code).toBe('source_fetch_failed');
    expect(job.attemptsMade).toBe(2);
  }, 30_000);

  it('a sourceUrl with a malformed percent escape is refused at submit (400), never queued', async () => {
    for (const path of ['/a%zz.wav', '/%E0%A4.wav']) {
      const res = await api.postJson('/v1/jobs', { sourceUrl: `${originUrl}${path}`, profile: 'ebu-r128' }, KEYS.alpha);
      expect(res.status).toBe(400);
      expect(res.headers['content-type']).toContain('application/problem+json');
      expect(res.body).toMatchObject({ code: 'validation_failed', field: 'sourceUrl' });
    }
    expect(hits.has('/a%zz.wav')).toBe(false);
  });
});

describe('upload deadlines and limits', () => {
  const sendPastLimit = async (c: Awaited<ReturnType<typeof rawConnection>>) => {
    await write(c.socket, multipartHead(4 * LIMIT));
    await write(c.socket, partsBefore);
    for (let sent = 0; sent < 1.5 * LIMIT && statusOf(c.received()) === 0; sent += 64 * 1024)
      await write(c.socket, Buffer.alloc(64 * 1024, 1));
  };

  it('an over-limit upload whose client then disconnects: the temp file is removed', async () => {
    const c = await rawConnection();
    await sendPastLimit(c);
    c.socket.destroy();
    await until(async () => tmpFiles().length === 0, 50);
    expect((await api.get('/healthz')).status).toBe(200);
  });

  it('an over-limit upload whose client then stalls: 413 problem+json, the temp file removed', async () => {
    const c = await rawConnection();
    await sendPastLimit(c);
    await until(async () => statusOf(c.received()) !== 0, 50);
    expect(statusOf(c.received())).toBe(413);
    expect(bodyOf(c.received()).code).toBe('payload_too_large');
    expect(tmpFiles()).toEqual([]);
    c.socket.destroy();
  });

  it('an upload abandoned under the limit: the temp file is removed', async () => {
    const c = await rawConnection();
    await write(c.socket, multipartHead(LIMIT - 1024));
    await write(c.socket, partsBefore);
    await write(c.socket, Buffer.alloc(256 * 1024, 1));
    await until(async () => tmpFiles().length === 1, 20);
    c.socket.destroy();
    await until(async () => tmpFiles().length === 0, 50);
  });

  it('a stalled upload gets 408 problem+json after the body timeout and its temp file goes', async () => {
    const c = await rawConnection();
    await write(c.socket, multipartHead(LIMIT - 1024));
    await write(c.socket, partsBefore);
    await write(c.socket, Buffer.alloc(128 * 1024, 1));
    await until(async () => tmpFiles().length === 1, 20);
    await c.closed; // the server closes it: nothing arrived for the body timeout
    expect(statusOf(c.received())).toBe(408);
    expect(c.received()).toMatch(/content-type: application\/problem\+json/i);
    expect(bodyOf(c.received()).code).toBe('request_timeout');
    await until(async () => tmpFiles().length === 0, 50);
  });

  it('a slow but live upload outlasts the partial-file sweep (its temp file is touched while bytes arrive)', async () => {
    // 24 x 1 KiB, one every 0.3 s: 7 s, past the sweep's age (2 x 1.5 s) and well under one 1 MiB write block.
    const tail = Buffer.from(`\r\n--${BOUNDARY}--\r\n`);
    const fileBytes = 24 * 1024;
    const c = await rawConnection();
    await write(c.socket, multipartHead(partsBefore.length + fileBytes + tail.length));
    await write(c.socket, partsBefore);
    for (let i = 0; i < 24; i++) {
      await write(c.socket, Buffer.alloc(1024, 1));
      await sleep(300);
    }
    await write(c.socket, tail);
    await until(async () => statusOf(c.received()) !== 0 && c.received().trimEnd().endsWith('}'), 20);
    expect(statusOf(c.received())).toBe(202);
    c.socket.destroy();
  }, 30_000);

  it('100 stalled uploads: every one closed with 408 after the body timeout; temp files and descriptors back to where they were', async () => {
    const fds = () => readdirSync('/proc/self/fd').length;
    const before = fds();
    const conns = await Promise.all(
      Array.from({ length: 100 }, async () => {
        const c = await rawConnection();
        await write(c.socket, multipartHead(LIMIT - 1024));
        await write(c.socket, partsBefore);
        await write(c.socket, Buffer.alloc(16 * 1024, 1));
        return c;
      }),
    );
    const peakTmp = await until(async () => {
      const n = tmpFiles().length;
      return n >= 100 ? n : null;
    }, 20);
    const peakFds = fds();
    await Promise.all(conns.map((c) => c.closed));
    expect(conns.map((c) => statusOf(c.received())).filter((st) => st !== 408)).toEqual([]);
    await until(async () => tmpFiles().length === 0, 50);
    const after = await until(async () => {
      const n = fds();
      return n <= before + 5 ? n : null;
    }, 50);
    console.log(
      `[deadlines stalled uploads] 100 stalled: peak ${peakTmp} temp files, descriptors ${before} -> ${peakFds} -> ${after} (this process holds both ends); after the body timeout: 100 x 408, 0 temp files`,
    );
  });

  it('headers larger than the parser allows: 431 problem+json', async () => {
    const c = await rawConnection();
    c.socket.write(`GET /healthz HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Big: ${'h'.repeat(20_000)}\r\n\r\n`);
    await c.closed;
    expect(statusOf(c.received())).toBe(431);
    expect(bodyOf(c.received()).code).toBe('headers_too_large');
    expect(c.received().split('h'.repeat(10)).length).toBe(1);
  });

  it.each([
    ['a file part', partsBefore, 1],
    ['a preamble that never reaches a boundary', Buffer.alloc(0), 0x41],
  ])('an unterminated chunked body over the limit (%s) gets 413 once past the limit', async (_name, head, fill) => {
    const c = await rawConnection();
    await write(c.socket, multipartHead(null));
    if (head.length > 0) await write(c.socket, chunk(head)); // an empty chunk would end the body
    let sent = head.length;
    while (statusOf(c.received()) === 0 && sent < 8 * LIMIT && !c.socket.destroyed) {
      await write(c.socket, chunk(Buffer.alloc(64 * 1024, fill)));
      sent += 64 * 1024;
      if (sent > LIMIT) await sleep(1);
    }
    await until(async () => statusOf(c.received()) !== 0 || c.socket.destroyed, 20);
    expect(statusOf(c.received())).toBe(413);
    expect(bodyOf(c.received()).code).toBe('payload_too_large');
    expect(sent).toBeLessThan(4 * LIMIT);
    c.socket.destroy();
    await until(async () => tmpFiles().length === 0, 50);
    console.log(`[deadlines chunked] ${_name}: 413 after ${(sent / LIMIT).toFixed(2)} MiB sent (limit 1 MiB)`);
  });

  it('an unterminated chunked JSON body over 1 MiB gets 413', async () => {
    const c = await rawConnection();
    await write(
      c.socket,
      [
        'POST /v1/jobs HTTP/1.1',
        'Host: 127.0.0.1',
        `Authorization: Bearer ${KEYS.alpha}`,
        'Content-Type: application/json',
        'Transfer-Encoding: chunked',
        '',
        '',
      ].join('\r\n'),
    );
    await write(c.socket, chunk(Buffer.from('{"profile":"')));
    let sent = 0;
    while (statusOf(c.received()) === 0 && sent < 8 * LIMIT && !c.socket.destroyed) {
      await write(c.socket, chunk(Buffer.alloc(64 * 1024, 0x61)));
      sent += 64 * 1024;
      if (sent > LIMIT) await sleep(1);
    }
    await until(async () => statusOf(c.received()) !== 0 || c.socket.destroyed, 20);
    expect(statusOf(c.received())).toBe(413);
    expect(sent).toBeLessThan(4 * LIMIT);
    c.socket.destroy();
  });
});

describe('the whole-request timeout', () => {
  it('an upload that keeps dripping past EARMARK_REQUEST_TIMEOUT_MS gets 408 problem+json and its temp file goes', async () => {
    const slow = await startService({
      worker: false,
      env: { EARMARK_RATE_LIMIT_PER_MINUTE: '0', EARMARK_REQUEST_TIMEOUT_MS: '1500', EARMARK_BODY_TIMEOUT_MS: '10000' },
    });
    try {
      const socket = connect(Number(new URL(slow.url).port), '127.0.0.1');
      let text = '';
      socket.on('data', (d) => {
        text += d.toString('latin1');
      });
      socket.on('error', () => undefined);
      const closed = new Promise<void>((done) => socket.once('close', () => done()));
      socket.write(multipartHead(LIMIT));
      socket.write(partsBefore);
      // 1 KiB every 0.2 s: never idle, never done.
      const timer = setInterval(() => {
        if (!socket.destroyed) socket.write(Buffer.alloc(1024, 1));
      }, 200);
      await closed;
      clearInterval(timer);
      expect(statusOf(text)).toBe(408);
      expect(bodyOf(text).code).toBe('request_timeout');
      await until(async () => readdirSync(join(slow.dir, 'tmp')).length === 0, 50);
    } finally {
      await slow.close();
    }
  });
});

describe('typed errors for what the parser and router refuse', () => {
  it('multipart without a boundary: 400 problem+json', async () => {
    const res = await api.postJson('/v1/jobs', 'x', KEYS.alpha, { 'content-type': 'multipart/form-data' });
    expect(res.status).toBe(400);
    expect(res.headers['content-type']).toContain('application/problem+json');
    expect(res.body).toMatchObject({ code: 'validation_failed', field: 'content-type' });
  });

  it('a control character in a header: 400 problem+json', async () => {
    const c = await rawConnection();
    c.socket.write('GET /healthz HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Note: a\x01b\r\n\r\n');
    await c.closed;
    expect(statusOf(c.received())).toBe(400);
    expect(c.received()).toMatch(/content-type: application\/problem\+json/i);
    expect(bodyOf(c.received()).code).toBe('validation_failed');
  });

  it('a long path: 414 problem+json that does not echo it', async () => {
    const long = 'q'.repeat(5000);
    // Not through the OpenAPI-checking client: the router answers before any route.
    const res = await request(svc.url).get(`/v1/jobs/${long}`).set('authorization', `Bearer ${KEYS.alpha}`);
    expect(res.status).toBe(414);
    expect(res.headers['content-type']).toContain('application/problem+json');
    expect(res.body.code).toBe('uri_too_long');
    expect(JSON.stringify(res.body).split('q').length - 1).toBeLessThanOrEqual(200);
  });

  it('a 2 MB multipart field name: typed 4xx, at most 200 characters of it in the body', async () => {
    const name = 'z'.repeat(2_000_000);
    // A valid form but for one extra field with that name.
    const body = Buffer.concat([
      partsBefore,
      Buffer.from(
        `RIFF\r\n--${BOUNDARY}\r\nContent-Disposition: form-data; name="${name}"\r\n\r\nx\r\n--${BOUNDARY}--\r\n`,
      ),
    ]);
    const c = await rawConnection();
    c.socket.write(multipartHead(body.length));
    c.socket.write(body);
    await until(async () => c.received().includes('\r\n\r\n{') && c.received().trimEnd().endsWith('}'), 20);
    const status = statusOf(c.received());
    expect(status).toBeGreaterThanOrEqual(400);
    expect(status).toBeLessThan(500);
    expect(c.received()).toMatch(/content-type: application\/problem\+json/i);
    const text = c.received().slice(c.received().indexOf('\r\n\r\n') + 4);
    expect(text.split('z').length - 1).toBeLessThanOrEqual(200);
    c.socket.destroy();
    console.log(
      `[deadlines field name] ${status} ${String(bodyOf(c.received()).code)} "${String(bodyOf(c.received()).detail)}", ${text.split('z').length - 1} characters of the name in a ${text.length}-character body`,
    );
  });

  it.each([
    ['a field', (name: string) => `Content-Disposition: form-data; name="${name}"\r\n\r\nx`],
    [
      'a file part',
      (name: string) =>
        `Content-Disposition: form-data; name="${name}"; filename="a.wav"\r\nContent-Type: audio/wav\r\n\r\nRIFF`,
    ],
  ])(
    'a 10,000-character name of %s the parser accepts: at most 200 characters of it in the body',
    async (_kind, part) => {
      const name = 'z'.repeat(10_000);
      const body = `--${BOUNDARY}\r\nContent-Disposition: form-data; name="profile"\r\n\r\nebu-r128\r\n--${BOUNDARY}\r\n${part(name)}\r\n--${BOUNDARY}--\r\n`;
      const res = await request(svc.url)
        .post('/v1/jobs')
        .set('authorization', `Bearer ${KEYS.alpha}`)
        .set('content-type', `multipart/form-data; boundary=${BOUNDARY}`)
        .send(body);
      expect(res.status).toBe(400);
      expect(res.headers['content-type']).toContain('application/problem+json');
      expect(res.text.split('z').length - 1).toBeLessThanOrEqual(200);
      console.log(
        `[deadlines long name] ${_kind}: ${res.status} ${res.body.code}, ${res.text.split('z').length - 1} characters of the name in the body`,
      );
    },
  );
});

describe('partial uploads left by a killed process', () => {
  it('are removed at start-up and by the periodic sweep; fresh ones stay', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'earmark-sweep-'));
    mkdirSync(join(dir, 'tmp'), { recursive: true });
    const old = new Date(Date.now() - 3600_000);
    writeFileSync(join(dir, 'tmp', 'old-partial'), Buffer.alloc(1024));
    utimesSync(join(dir, 'tmp', 'old-partial'), old, old);
    writeFileSync(join(dir, 'tmp', 'fresh-partial'), Buffer.alloc(1024));
    const config = loadConfig(testEnv(dir, { EARMARK_BODY_TIMEOUT_MS: '500', EARMARK_FETCH_TIMEOUT_MS: '500' }));
    const running = await startApi(config, pino({ level: 'silent' }));
    try {
      expect(readdirSync(join(dir, 'tmp'))).toEqual(['fresh-partial']);
      // Untouched past twice the body timeout: the next sweep takes it.
      await until(async () => readdirSync(join(dir, 'tmp')).length === 0, 100);
    } finally {
      await running.close();
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
