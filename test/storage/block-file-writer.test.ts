// The upload writer: the file holds exactly the bytes of the stream, whatever the chunking (chunks
// across and exactly on its 1 MiB block boundaries, none at all), it never overwrites a file, and
// a failing source ends it with that failure and the handle closed.
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { WRITE_BLOCK_BYTES, writeChunksToNewFile } from '../../src/storage/block-file-writer.ts';

const dir = await mkdtemp(join(tmpdir(), 'earmark-writer-'));
afterAll(() => rm(dir, { recursive: true, force: true }));

async function* chunked(bytes: Uint8Array, sizes: number[]): AsyncGenerator<Uint8Array> {
  for (let at = 0, k = 0; at < bytes.length; k++) {
    const n = sizes[k % sizes.length];
    yield bytes.subarray(at, at + n);
    at += n;
  }
}

const pattern = (length: number) => Uint8Array.from({ length }, (_, i) => (i * 2654435761) >>> 24);

describe('writeChunksToNewFile', () => {
  const cases: [string, number, number[]][] = [
    ['odd chunks across several blocks', 3 * WRITE_BLOCK_BYTES + 12_345, [65_536, 1, 99_999, 7]],
    ['chunks ending exactly on a block', 2 * WRITE_BLOCK_BYTES, [WRITE_BLOCK_BYTES / 4]],
    ['one chunk larger than two blocks', 2 * WRITE_BLOCK_BYTES + 5, [2 * WRITE_BLOCK_BYTES + 5]],
    ['a short file', 10, [3]],
  ];
  for (const [name, length, sizes] of cases) {
    it(`writes exactly the stream: ${name}`, async () => {
      const bytes = pattern(length);
      const path = join(dir, name.replace(/\W+/g, '-'));
      await writeChunksToNewFile(path, chunked(bytes, sizes));
      expect(Buffer.compare(await readFile(path), Buffer.from(bytes))).toBe(0);
    });
  }

  it('writes an empty file for an empty stream', async () => {
    const path = join(dir, 'empty');
    await writeChunksToNewFile(path, chunked(new Uint8Array(0), [1]));
    expect((await readFile(path)).length).toBe(0);
  });

  it('refuses to overwrite an existing file', async () => {
    const path = join(dir, 'exists');
    await writeFile(path, 'keep me');
    await expect(writeChunksToNewFile(path, chunked(pattern(10), [5]))).rejects.toMatchObject({ code: 'EEXIST' });
    expect(await readFile(path, 'utf8')).toBe('keep me');
  });

  it('ends with the source failure, after what came before it was written', async () => {
    const path = join(dir, 'broken-source');
    async function* failing(): AsyncGenerator<Uint8Array> {
      yield pattern(WRITE_BLOCK_BYTES + 1);
      throw new Error('client went away');
    }
    await expect(writeChunksToNewFile(path, failing())).rejects.toThrow('client went away');
    // The full first block had gone to disk; the handle is closed, so the file can be removed.
    expect((await readFile(path)).length).toBe(WRITE_BLOCK_BYTES);
    await rm(path);
  });
});
