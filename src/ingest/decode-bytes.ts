/**
 * Turns the bytes of a feed into text: a byte-order mark wins, then the encoding declared
 * in the XML prolog or by the caller (HTTP Content-Type charset), then UTF-8. Bytes that
 * are not valid UTF-8 and declare nothing are read as windows-1252 with a warning, since
 * that is what undeclared non-UTF-8 news feeds are in practice (common practice).
 */
import { TextDecoder } from 'node:util';
import { StrandError } from '../errors.js';

/** Decoded text plus any warning worth showing the operator. */
export interface DecodedText {
  text: string;
  encoding: string;
  warning: string | null;
}

/** Decodes feed bytes; throws STRAND_ENCODING_UNSUPPORTED for an unknown declared charset. */
export function decodeBytes(bytes: Uint8Array, declared?: string | null): DecodedText {
  if (bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf) return strictUtf8(bytes.subarray(3));
  if ((bytes[0] === 0xff && bytes[1] === 0xfe) || (bytes[0] === 0xfe && bytes[1] === 0xff)) {
    const encoding = bytes[0] === 0xff ? 'utf-16le' : 'utf-16be';
    return { text: new TextDecoder(encoding).decode(bytes.subarray(2)), encoding, warning: null };
  }
  const label = (declared ?? prologEncoding(bytes))?.trim().toLowerCase();
  if (label && label !== 'utf-8' && label !== 'utf8') {
    let decoder: TextDecoder;
    try {
      decoder = new TextDecoder(label);
    } catch (err) {
      throw new StrandError('STRAND_ENCODING_UNSUPPORTED', `unsupported character set "${label}"`, { cause: err });
    }
    return { text: decoder.decode(bytes), encoding: decoder.encoding, warning: null };
  }
  try {
    return strictUtf8(bytes);
  } catch {
    return {
      text: new TextDecoder('windows-1252').decode(bytes),
      encoding: 'windows-1252',
      warning: 'not valid UTF-8 and no character set declared; read as windows-1252',
    };
  }
}

function strictUtf8(bytes: Uint8Array): DecodedText {
  return { text: new TextDecoder('utf-8', { fatal: true }).decode(bytes), encoding: 'utf-8', warning: null };
}

/** The encoding named in an XML declaration, read as ASCII from the first bytes. */
function prologEncoding(bytes: Uint8Array): string | null {
  const head = Buffer.from(bytes.subarray(0, 200)).toString('latin1');
  const m = /^\s*<\?xml[^>]*\bencoding\s*=\s*["']([A-Za-z0-9._:-]+)["']/.exec(head);
  return m ? m[1]! : null;
}
