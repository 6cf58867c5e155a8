// Where each kernel's regions sit in its memory (bytes), by the names its .wat's "Memory" comment
// gives them. The loaders take the offsets from here; the .wat text cannot import them, so
// test/analysis/kernels.test.ts checks its comment and its address literals against this table.

export const KERNEL_MEMORY = {
  sums: { IN: 0, SUM: 65536, SQUARES: 65552 },
  'pair-sums': { A: 0, B: 65536, SQUARES: 131072, PRODUCT: 131088 },
  ballistics: { A: 0, B: 65536, OUT: 131072 },
  envelope: { IN: 0, MAX: 65536, MIN: 67584 },
  'k-weighting': { IN_A: 0, IN_B: 65536, POWER: 131072, COEF: 262144, WINDOW: 262208, PAIRS: 262272 },
  'reconstructed-peak': {
    IN: 0,
    ENV: 65536,
    C1: 67584,
    C2: 68096,
    ST: 68352,
    SCR: 68448,
    X: 68608,
    U: 200192,
    OE: 331776,
    OP: 397312,
    OL: 528384,
    ON: 593920,
    XF: 659456,
    UF: 725248,
    W: 791040,
    OV: 791488,
  },
  'true-peak': { IN: 0, ENV: 65600, C: 67648, ST: 68032, OE: 68096, OP: 133632, W: 264704, OL: 265216 },
} as const satisfies Record<string, Record<string, number>>;
