// Types of bin/build-cli.mjs for the TypeScript benches and tests that import it.
export interface CliManifest {
  entry: string;
  workers: string[];
  externals: string[];
  inputs: Record<string, { mtimeMs: number; size: number }>;
}
export const root: string;
export const outDir: string;
export const manifestPath: string;
export function buildCli(options?: { clean?: boolean; quiet?: boolean; out?: string }): Promise<CliManifest>;
export function isFresh(manifest: CliManifest): boolean;
