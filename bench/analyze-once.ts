// Child process of the benchmark: one full analysis, then its own peak RSS as JSON on stdout.
// Usage: analyze-once <file> [threads] [speech] (`speech` runs the speech detector too).
import { readFileSync } from 'node:fs';
import { analyzeFile } from '../src/engine/analyze-file.ts';

/** This process's own peak RSS (Linux VmHWM), kB: maxRSS also counts the parent's pages at fork
 * (Linux keeps the pre-exec high-water mark), so a large parent raises every child's maxRSS. */
function ownPeakRssKb(): number | null {
  try {
    const match = /^VmHWM:\s*(\d+) kB/m.exec(readFileSync('/proc/self/status', 'utf8'));
    return match ? Number(match[1]) : null;
  } catch {
    return null;
  }
}

const [file, threads, speech] = process.argv.slice(2);
const document = await analyzeFile(file, {
  hash: false,
  threads: Number(threads ?? 1),
  ...(speech === 'speech' ? { analysis: { speech: { enabled: true } } } : {}),
});
process.stdout.write(
  JSON.stringify({
    analysisSeconds: document.analysisSeconds,
    integratedLufs: document.summary.integratedLufs,
    dialogueLufs: document.dialogue.dialogueLufs,
    maxRssKb: process.resourceUsage().maxRSS,
    ownPeakRssKb: ownPeakRssKb(),
  }),
);
