// Child process of `npm run bench:decoders`: decodes one file one way, then prints its figures
// as JSON on stdout. Ways: `ours` (openAudioFile, blocks consumed without analysis), `raw` (the
// format's decoder package on the whole file at once, no slicing or checks), or `candidate:NAME`
// (an entry of the module named by BENCH_DECODER_CANDIDATES; see decoders.ts).
import { readFile } from 'node:fs/promises';
import { pathToFileURL } from 'node:url';
import { openAudioFile } from '../src/decode/index.ts';
import { isCandidateList, type BenchFormat, isBenchFormat } from './decoder-formats.ts';

interface Decoded {
  channelData: Float32Array[];
}

/** The package a whole file of each format goes to, as one call. */
const RAW: Record<BenchFormat, () => Promise<(bytes: Uint8Array) => Promise<Decoded>>> = {
  flac16: async () => (await import('@audio/decode-flac')).default,
  flac24: async () => (await import('@audio/decode-flac')).default,
  mp3: async () => (await import('@audio/decode-mp3')).default,
  m4a: async () => (await import('@audio/decode-mp4')).default,
  adts: async () => (await import('@audio/decode-aac')).default,
  opus: async () => (await import('@audio/decode-opus')).default,
  vorbis: async () => (await import('@audio/decode-vorbis')).default,
};

async function decodeOurs(path: string): Promise<number> {
  const decoded = await openAudioFile(path);
  let frames = 0;
  for await (const block of decoded.blocks) frames += block.frames;
  return frames;
}

async function decodeRaw(format: BenchFormat, path: string): Promise<number> {
  const decode = await RAW[format]();
  const out = await decode(await readFile(path));
  return out.channelData[0]?.length ?? 0;
}

async function decodeCandidate(name: string, path: string): Promise<number> {
  const modulePath = process.env.BENCH_DECODER_CANDIDATES;
  if (!modulePath) throw new Error('candidate runs need BENCH_DECODER_CANDIDATES');
  const loaded: unknown = (await import(pathToFileURL(modulePath).href)).default;
  if (!isCandidateList(loaded)) throw new Error(`${modulePath} does not export a candidate list`);
  const candidate = loaded.find((c) => c.name === name);
  if (!candidate) throw new Error(`no candidate named ${name}`);
  return candidate.decode(path);
}

const [way, format, path] = process.argv.slice(2);
if (!way || !path || !isBenchFormat(format))
  throw new Error('usage: decode-once.ts ours|raw|candidate:NAME FORMAT FILE');
const started = performance.now();
const frames =
  way === 'ours'
    ? await decodeOurs(path)
    : way === 'raw'
      ? await decodeRaw(format, path)
      : await decodeCandidate(way.replace(/^candidate:/, ''), path);
const cpu = process.cpuUsage();
process.stdout.write(
  JSON.stringify({
    decodeSeconds: (performance.now() - started) / 1000,
    // CPU time of the whole process, start-up included: steadier than wall time on a shared machine.
    cpuSeconds: (cpu.user + cpu.system) / 1e6,
    frames,
    maxRssKb: process.resourceUsage().maxRSS,
  }),
);
