/** Types of build-js.mjs (a plain ES module so the build runs without a TypeScript loader). */
export function buildJavaScript(root: string, outdir: string): Promise<string[]>;
