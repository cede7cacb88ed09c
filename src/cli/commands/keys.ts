/**
 * `strandline keys`: API keys from the command line, for the operator who holds the store
 * (the first admin key of a deployment is made here). The key is printed once; only its
 * SHA-256 is stored.
 */
import { SCOPES, newApiKey } from '../../api/access.js';
import { StrandError } from '../../errors.js';
import type { Scope } from '../../store/store.js';
import { type CommonOptions, withStore } from '../common.js';

/** The scopes of `--scopes read,push`, refused with the known ones when one is not. */
export function parseScopes(text: string): Scope[] {
  const given = text
    .split(',')
    .map((s) => s.trim())
    .filter(Boolean);
  const unknown = given.filter((s) => !(SCOPES as readonly string[]).includes(s));
  if (given.length === 0 || unknown.length > 0)
    throw new StrandError(
      'STRAND_REQUEST_INVALID',
      `--scopes takes a comma-separated list of ${SCOPES.join(', ')}; not ${JSON.stringify(text.slice(0, 60))}`,
    );
  return given as Scope[];
}

/** Makes a key and prints it; returns the exit code. */
export async function createKeyCommand(opts: CommonOptions & { name: string; scopes: string }): Promise<number> {
  if (!/^[\x20-\x7e]{1,100}$/.test(opts.name))
    throw new StrandError('STRAND_REQUEST_INVALID', '--name must be 1 to 100 printable characters');
  const scopes = parseScopes(opts.scopes);
  const { record, key } = newApiKey(opts.name, scopes, new Date());
  await withStore(opts, (store) => store.addApiKey(record));
  process.stdout.write(`${record.id} (${record.scopes.join(', ')}): ${key}\nthe key is shown this once; only its hash is stored\n`);
  return 0;
}

/** Lists the keys (never a key itself). */
export async function listKeysCommand(opts: CommonOptions): Promise<number> {
  const keys = await withStore(opts, (store) => store.listApiKeys());
  const lines = keys.map((k) => `${k.id}  ${k.scopes.join(',').padEnd(20)}  ${k.created}  ${k.name}`);
  process.stdout.write(lines.length ? `${lines.join('\n')}\n` : 'no API keys\n');
  return 0;
}

/** Revokes a key; 1 when there was none. */
export async function revokeKeyCommand(id: string, opts: CommonOptions): Promise<number> {
  if (!/^key_[0-9a-f]{12}$/.test(id))
    throw new StrandError('STRAND_REQUEST_INVALID', `a key id is key_ and 12 hex digits, not ${JSON.stringify(id.slice(0, 40))}`);
  if (!(await withStore(opts, (store) => store.deleteApiKey(id)))) {
    process.stderr.write(`strandline: no API key ${id}\n`);
    return 1;
  }
  process.stdout.write(`revoked ${id} (every api process refuses it within a second)\n`);
  return 0;
}
