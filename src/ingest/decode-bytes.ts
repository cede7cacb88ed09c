/**
 * Turns the bytes of a feed into text: a byte-order mark wins, then the encoding declared
 * in the XML prolog or by the caller (HTTP Content-Type charset), then UTF-8. Bytes that
 * are not valid UTF-8 and declare nothing are read as windows-1252 with a warning, since
 * that is what undeclared non-UTF-8 news feeds are in practice (common practice).
 * iconv-lite decodes the legacy charsets: Node's own TextDecoder reads windows-1252 as
 * ISO-8859-1 and gets the curly quotes at 0x80-0x9F wrong.
 */
import iconv from 'iconv-lite';
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
    return { text: iconv.decode(Buffer.from(bytes.subarray(2)), encoding), encoding, warning: null };
  }
  const label = (declared ?? prologEncoding(bytes))?.trim().toLowerCase();
  if (label && label !== 'utf-8' && label !== 'utf8') {
    if (!iconv.encodingExists(label)) throw new StrandError('STRAND_ENCODING_UNSUPPORTED', `unsupported character set "${label}"`);
    // WHATWG Encoding Standard: the label iso-8859-1 means windows-1252 on the web.
    const encoding = label === 'iso-8859-1' || label === 'latin1' || label === 'us-ascii' ? 'windows-1252' : label;
    return { text: iconv.decode(Buffer.from(bytes), encoding), encoding, warning: null };
  }
  try {
    return strictUtf8(bytes);
  } catch {
    return {
      text: iconv.decode(Buffer.from(bytes), 'windows-1252'),
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
