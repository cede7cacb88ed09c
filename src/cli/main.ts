#!/usr/bin/env node
/** The `strandline` command line. */
import { runCli } from './program.js';

runCli(process.argv.slice(2)).then((code) => {
  // A failed start ends the process even if a connection or timer is still open.
  if (code === 2) process.stderr.write('', () => process.exit(2));
  else process.exitCode = code;
});
