// Copies the non-TypeScript files the compiled program reads at run time (the web page,
// Lua scripts, the SQLite checkpoint thread) from src/ into dist/, keeping their relative paths.
import { cpSync, existsSync } from 'node:fs';

for (const dir of ['web/static', 'store/redis/lua']) {
  if (existsSync(`src/${dir}`)) cpSync(`src/${dir}`, `dist/${dir}`, { recursive: true });
}
for (const file of ['store/sqlite/checkpoint-thread.mjs']) cpSync(`src/${file}`, `dist/${file}`);
