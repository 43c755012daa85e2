/** Types of pack-install.mjs (plain ES module, shared by .ci/install-proof.mjs and the start-up benchmark). */
export interface PackResult {
  filename: string;
  size: number;
  unpackedSize: number;
  files: { path: string; size: number }[];
}
export function packAndInstall(
  root: string,
  work: string,
): { packed: PackResult; tarball: string; project: string; pkg: Record<string, unknown>; install: { status: number | null; stderr: string }; offline: boolean };
