/**
 * JSON text pushed to the API (request bodies, NDJSON lines), read with secure-json-parse
 * (the parser fastify itself uses) so that a `__proto__` or `constructor.prototype` key,
 * which could change the prototype of the objects the text is read into (prototype
 * poisoning), is refused, and the client is told that this is why, not that the body "is
 * not valid JSON".
 */
import sjson from 'secure-json-parse';
import { StrandError } from '../errors.js';

/** Parses JSON text; throws STRAND_REQUEST_INVALID naming the refused key or the syntax error. `where` prefixes the message ("line 3"). */
export function parseJsonText(text: string, where = 'the body'): unknown {
  if (text.trim() === '') throw new StrandError('STRAND_REQUEST_INVALID', `${where} is empty`);
  try {
    return sjson.parse(text, undefined, { protoAction: 'error', constructorAction: 'error' });
  } catch (err) {
    const message = (err as Error).message;
    // secure-json-parse says the same for both keys; the text tells which one it met.
    if (/forbidden prototype property/i.test(message))
      throw refused(where, /"__proto__"\s*:/.test(text) ? '"__proto__"' : '"constructor" with a "prototype"');
    throw new StrandError('STRAND_REQUEST_INVALID', `${where} is not valid JSON: ${message}`, { cause: err });
  }
}

function refused(where: string, key: string): StrandError {
  return new StrandError(
    'STRAND_REQUEST_INVALID',
    `${where} was refused: it has a ${key} key, which could change the prototype of the objects it is read into (prototype poisoning); rename or remove that key`,
  );
}
