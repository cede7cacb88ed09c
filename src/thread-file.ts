/**
 * Where a worker thread's module is: the compiled one next to the caller; run from sources
 * (tests, tsx), the TypeScript one, loaded through tsx.
 */
import { existsSync } from 'node:fs';
import { createRequire } from 'node:module';
import { fileURLToPath, pathToFileURL } from 'node:url';

/** `name` without extension, resolved beside `callerUrl` (the caller's `import.meta.url`). */
export function threadFile(name: string, callerUrl: string): { filename: string; execArgv?: string[] } {
  const js = new URL(`./${name}.js`, callerUrl);
  if (existsSync(fileURLToPath(js))) return { filename: js.href };
  // tsx by its path: the working directory may be anywhere.
  const tsx = pathToFileURL(createRequire(callerUrl).resolve('tsx')).href;
  return { filename: new URL(`./${name}.ts`, callerUrl).href, execArgv: ['--import', tsx] };
}
