// The package job contract between the API and the worker (see contract.ts for the analysis
// job's). A package is a set of the tenant's analysis jobs checked together; its job data holds
// their ids and roles, never audio: the worker finds each one's stored audio once it has finished.

import type { PackageRole } from '../engine/package-set.ts';
import type { Verdict } from '../profiles/index.ts';

export const PACKAGE_QUEUE = 'packages';
export const CHECK_PACKAGE_V1 = 'package.v1';

export interface PackageMemberRef {
  jobId: string;
  role: PackageRole;
}

export interface CheckPackageJobV1 {
  packageId: string;
  tenant: string;
  /** The profile the mix and versions were checked against; stems against stemProfile when given. */
  profile: string;
  stemProfile: string | null;
  toleranceDb: number;
  members: PackageMemberRef[];
  callbackUrl: string | null;
  externalId: string | null;
  submittedAt: string;
}

export interface CheckPackageResultV1 {
  verdict: Verdict;
  headline: string;
  /** The package report's key in storage (reports/<packageId>.json). */
  reportKey: string;
}

export type PackageEvent = 'package.completed' | 'package.failed';

export const newPackageId = (hex: string) => `p_${hex}`;
