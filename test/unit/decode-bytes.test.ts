import { describe, expect, it } from 'vitest';
import { decodeBytes } from '../../src/ingest/decode-bytes.js';
import { isStrandError } from '../../src/errors.js';

// Encodings: ISO-8859-1 and windows-1252 byte values from their code charts (WHATWG
// Encoding Standard, index-windows-1252; common practice): 0xE9 = é, 0x93/0x94 = “ ”.
describe('decoding feed bytes', () => {
  it('reads UTF-8, with or without a byte-order mark', () => {
    expect(decodeBytes(Buffer.from('<rss>café</rss>')).text).toBe('<rss>café</rss>');
    expect(decodeBytes(Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from('<a/>')])).text).toBe('<a/>');
  });

  it('honours the encoding declared in the XML prolog', () => {
    const bytes = Buffer.concat([Buffer.from('<?xml version="1.0" encoding="ISO-8859-1"?><t>caf'), Buffer.from([0xe9]), Buffer.from('</t>')]);
    expect(decodeBytes(bytes).text).toContain('café');
  });

  it('honours a charset given by the caller (HTTP Content-Type)', () => {
    expect(decodeBytes(Buffer.from([0x93, 0x68, 0x69, 0x94]), 'windows-1252').text).toBe('“hi”');
  });

  it('reads undeclared non-UTF-8 bytes as windows-1252 and says so', () => {
    const r = decodeBytes(Buffer.from([0x3c, 0x74, 0x3e, 0x93, 0x78, 0x94, 0x3c, 0x2f, 0x74, 0x3e]));
    expect(r.text).toBe('<t>“x”</t>');
    expect(r.warning).toMatch(/not valid UTF-8/);
  });

  it('refuses an unknown declared charset', () => {
    let err: unknown;
    try {
      decodeBytes(Buffer.from('<?xml version="1.0" encoding="x-klingon"?><t/>'));
    } catch (e) {
      err = e;
    }
    expect(isStrandError(err, 'STRAND_ENCODING_UNSUPPORTED')).toBe(true);
  });
});
