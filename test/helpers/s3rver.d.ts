// The few parts of s3rver (no types of its own) the tests use.
declare module 's3rver' {
  import type { AddressInfo } from 'node:net';
  import type { Server } from 'node:http';

  interface S3rverOptions {
    address?: string;
    port?: number;
    silent?: boolean;
    directory: string;
  }

  export default class S3rver {
    constructor(options: S3rverOptions);
    httpServer?: Server;
    run(): Promise<AddressInfo>;
    close(): Promise<void>;
  }
}
