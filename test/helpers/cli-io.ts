// The CLI's output captured in memory, for tests that run main() in-process.
import type { CliIo } from '../../src/cli/main.ts';

export function capture(): CliIo & { out: string; err: string } {
  const io = {
    out: '',
    err: '',
    stdout: (t: string) => {
      io.out += t;
    },
    stderr: (t: string) => {
      io.err += t;
    },
  };
  return io;
}

/** Both streams into one text, in the order written. */
export function captureMerged(): CliIo & { out: string } {
  const io = {
    out: '',
    stdout: (t: string) => {
      io.out += t;
    },
    stderr: (t: string) => {
      io.out += t;
    },
  };
  return io;
}
