// Storage for uploads and reports behind one interface (types.ts): a local directory
// (local.ts) or an S3-compatible object store (s3.ts), chosen by EARMARK_STORAGE_URL.

import type { StorageLocation } from '../config/index.ts';
import { EarmarkError } from '../errors/index.ts';
import { LocalStorage } from './local.ts';
import type { Storage, StorageOptions } from './types.ts';

export { LocalStorage } from './local.ts';
export type { LocalCopy, PresignedUpload, Storage, StorageOptions, StoredFile, Swept } from './types.ts';

/** `localDir` is the file backend's root, or this host's folder for the S3 backend's temp copies. */
export async function openStorage(
  location: StorageLocation,
  localDir: string,
  options: StorageOptions = {},
): Promise<Storage> {
  try {
    if (location.kind === 'file') return await new LocalStorage(location.dir, options).init();
    // Loaded only when used: the SDK adds about a hundred modules to every process's start.
    const { createS3Client, S3Storage } = await import('./s3.ts');
    return await new S3Storage(createS3Client(location), location, localDir, options).init();
  } catch (error) {
    throw new EarmarkError('storage_unavailable', 'the storage directory cannot be created', {}, { cause: error });
  }
}
