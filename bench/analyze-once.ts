// Child process of the benchmark: one full analysis, then its own peak RSS as JSON on stdout.
import { analyzeFile } from '../src/engine/analyze-file.ts';

const [file, threads] = process.argv.slice(2);
const document = await analyzeFile(file, { hash: false, threads: Number(threads ?? 1) });
process.stdout.write(
  JSON.stringify({
    analysisSeconds: document.analysisSeconds,
    integratedLufs: document.summary.integratedLufs,
    maxRssKb: process.resourceUsage().maxRSS,
  }),
);
