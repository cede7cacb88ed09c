/**
 * Turns the bytes of a feed into text: a byte-order mark wins, then the encoding declared
 * by the caller (HTTP Content-Type charset) or in the XML prolog, then UTF-8. Bytes that
 * are not valid UTF-8 and declare nothing are read as windows-1252 with a warning, since
 * that is what undeclared non-UTF-8 news feeds are in practice (common practice).
 *
 * A declaration can be wrong, and the warning says what was declared, where, and what was
 * found: bytes declared UTF-8 that are not (invalid sequences become U+FFFD, or, when no
 * valid multi-byte sequence is there at all, the whole is read as windows-1252), and bytes
 * declared as a single-byte charset that are valid UTF-8 with multi-byte characters in them
 * (read as UTF-8: such byte pairs are almost never meant as two Latin-1 characters).
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

/** Labels of single-byte charsets that valid UTF-8 is checked against. */
const SINGLE_BYTE = /^(iso-?8859-\d+|latin-?1|l1|us-ascii|ascii|windows-125\d|cp125\d|x-cp125\d|koi8-[ru])$/;

/** Decodes feed bytes; throws STRAND_ENCODING_UNSUPPORTED for an unknown declared charset. */
export function decodeBytes(bytes: Uint8Array, declared?: string | null): DecodedText {
  if (bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf) return asUtf8(bytes.subarray(3), 'by a byte-order mark');
  if ((bytes[0] === 0xff && bytes[1] === 0xfe) || (bytes[0] === 0xfe && bytes[1] === 0xff)) {
    const encoding = bytes[0] === 0xff ? 'utf-16le' : 'utf-16be';
    return { text: iconv.decode(Buffer.from(bytes.subarray(2)), encoding), encoding, warning: null };
  }
  const fromHeader = declared?.trim().toLowerCase() || null;
  const label = fromHeader ?? prologEncoding(bytes)?.trim().toLowerCase() ?? null;
  const where = fromHeader ? 'by the HTTP Content-Type' : 'in the XML declaration';
  if (label === null) {
    const text = strictUtf8(bytes);
    if (text !== null) return { text, encoding: 'utf-8', warning: null };
    const utf8 = scanUtf8(bytes);
    return {
      text: iconv.decode(Buffer.from(bytes), 'windows-1252'),
      encoding: 'windows-1252',
      warning: `no character set declared and not valid UTF-8 (${utf8.invalid} invalid byte sequence(s), the first at byte ${utf8.firstInvalid}); read as windows-1252`,
    };
  }
  if (label === 'utf-8' || label === 'utf8') return asUtf8(bytes, where);
  if (!iconv.encodingExists(label))
    throw new StrandError('STRAND_ENCODING_UNSUPPORTED', `unsupported character set "${label}" (declared ${where})`);
  if (SINGLE_BYTE.test(label)) {
    const utf8 = scanUtf8(bytes);
    if (utf8.invalid === 0 && utf8.multiByte > 0) {
      return {
        text: new TextDecoder('utf-8').decode(bytes),
        encoding: 'utf-8',
        warning: `declared ${label} ${where}, but the bytes are valid UTF-8 with ${utf8.multiByte} multi-byte character(s); read as UTF-8`,
      };
    }
  }
  // WHATWG Encoding Standard: the labels iso-8859-1, latin1 and us-ascii mean windows-1252 on the web.
  const encoding = label === 'iso-8859-1' || label === 'latin1' || label === 'us-ascii' ? 'windows-1252' : label;
  return { text: iconv.decode(Buffer.from(bytes), encoding), encoding, warning: null };
}

/** Bytes declared UTF-8: strict when they are; repaired, and said so, when they are not. */
function asUtf8(bytes: Uint8Array, where: string): DecodedText {
  const text = strictUtf8(bytes);
  if (text !== null) return { text, encoding: 'utf-8', warning: null };
  const utf8 = scanUtf8(bytes);
  // Not one valid multi-byte sequence, only stray high bytes: a legacy file labelled UTF-8.
  if (utf8.multiByte === 0) {
    return {
      text: iconv.decode(Buffer.from(bytes), 'windows-1252'),
      encoding: 'windows-1252',
      warning: `declared UTF-8 ${where}, but ${utf8.invalid} byte(s) are not UTF-8 and no multi-byte UTF-8 character is present (the first bad byte at ${utf8.firstInvalid}); read as windows-1252`,
    };
  }
  return {
    text: new TextDecoder('utf-8').decode(bytes),
    encoding: 'utf-8',
    warning: `declared UTF-8 ${where}, but ${utf8.invalid} byte sequence(s) are not valid UTF-8 (the first at byte ${utf8.firstInvalid}); each replaced with U+FFFD`,
  };
}

/** The bytes as UTF-8 text, or null when they are not valid UTF-8 (the native decoder: the common case costs little). */
function strictUtf8(bytes: Uint8Array): string | null {
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    return null;
  }
}

/** Counts of valid multi-byte characters and invalid sequences (RFC 3629 section 4, well-formed UTF-8). */
function scanUtf8(b: Uint8Array): { multiByte: number; invalid: number; firstInvalid: number } {
  let multiByte = 0;
  let invalid = 0;
  let firstInvalid = -1;
  const bad = (at: number): void => {
    if (invalid++ === 0) firstInvalid = at;
  };
  for (let i = 0; i < b.length;) {
    const c = b[i]!;
    if (c < 0x80) {
      i++;
      continue;
    }
    // Lead byte: its length and the range its first continuation byte must fall in.
    let n = 0;
    let lo = 0x80;
    let hi = 0xbf;
    if (c >= 0xc2 && c <= 0xdf) n = 1;
    else if (c >= 0xe0 && c <= 0xef) [n, lo, hi] = [2, c === 0xe0 ? 0xa0 : 0x80, c === 0xed ? 0x9f : 0xbf];
    else if (c >= 0xf0 && c <= 0xf4) [n, lo, hi] = [3, c === 0xf0 ? 0x90 : 0x80, c === 0xf4 ? 0x8f : 0xbf];
    let ok = n > 0 && i + n < b.length && b[i + 1]! >= lo && b[i + 1]! <= hi;
    for (let k = 2; ok && k <= n; k++) ok = b[i + k]! >= 0x80 && b[i + k]! <= 0xbf;
    if (ok) {
      multiByte++;
      i += n + 1;
    } else {
      bad(i);
      i++;
    }
  }
  return { multiByte, invalid, firstInvalid };
}

/** The encoding named in an XML declaration, read as ASCII from the first bytes. */
function prologEncoding(bytes: Uint8Array): string | null {
  const head = Buffer.from(bytes.subarray(0, 200)).toString('latin1');
  const m = /^\s*<\?xml[^>]*\bencoding\s*=\s*["']([A-Za-z0-9._:-]+)["']/.exec(head);
  return m ? m[1]! : null;
}
