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
    const bytes = Buffer.concat([
      Buffer.from('<?xml version="1.0" encoding="ISO-8859-1"?><t>caf'),
      Buffer.from([0xe9]),
      Buffer.from('</t>'),
    ]);
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

  // Well-formed UTF-8: RFC 3629 section 4 (its byte-sequence table; 0xC3 0xA9 = é, 0xE2 0x80 0x9C = “).
  it('says what was declared and what was found when bytes declared UTF-8 are not: replaced with U+FFFD where UTF-8 is present', () => {
    const bytes = Buffer.concat([
      Buffer.from('<?xml version="1.0" encoding="UTF-8"?><t>café '),
      Buffer.from([0xff, 0xfe, 0x41]),
      Buffer.from('</t>'),
    ]);
    const r = decodeBytes(bytes);
    expect(r.text).toBe('<?xml version="1.0" encoding="UTF-8"?><t>café \uFFFD\uFFFDA</t>');
    expect(r.warning).toBe(
      'declared UTF-8 in the XML declaration, but 2 byte sequence(s) are not valid UTF-8 (the first at byte 47); each replaced with U+FFFD',
    );
  });

  it('reads a legacy file labelled UTF-8 (stray high bytes, not one UTF-8 character) as windows-1252, and says so', () => {
    const r = decodeBytes(
      Buffer.concat([Buffer.from('<t>caf'), Buffer.from([0xe9]), Buffer.from(' '), Buffer.from([0x93, 0x78, 0x94]), Buffer.from('</t>')]),
      'utf-8',
    );
    expect(r.text).toBe('<t>café “x”</t>');
    expect(r.warning).toBe(
      'declared UTF-8 by the HTTP Content-Type, but 3 byte(s) are not UTF-8 and no multi-byte UTF-8 character is present (the first bad byte at 6); read as windows-1252',
    );
  });

  it('reads UTF-8 bytes declared ISO-8859-1 as UTF-8 instead of garbling them, and says so', () => {
    const utf8 = Buffer.from('<?xml version="1.0" encoding="ISO-8859-1"?><t>café “ferry” naïve</t>');
    const r = decodeBytes(utf8);
    expect(r.text).toContain('café “ferry” naïve');
    expect(r.warning).toBe(
      'declared iso-8859-1 in the XML declaration, but the bytes are valid UTF-8 with 4 multi-byte character(s); read as UTF-8',
    );
  });

  it('keeps a declaration that plain ASCII or real Latin-1 bytes bear out, without a warning', () => {
    expect(decodeBytes(Buffer.from('<?xml version="1.0" encoding="ISO-8859-1"?><t>ferry</t>')).warning).toBeNull();
    const latin1 = Buffer.concat([
      Buffer.from('<?xml version="1.0" encoding="ISO-8859-1"?><t>na'),
      Buffer.from([0xef]),
      Buffer.from('ve caf'),
      Buffer.from([0xe9]),
      Buffer.from('</t>'),
    ]);
    expect(decodeBytes(latin1)).toMatchObject({ text: expect.stringContaining('naïve café'), warning: null });
  });

  it('says no character set was declared only when none was', () => {
    expect(decodeBytes(Buffer.from([0x3c, 0x74, 0x3e, 0xe9, 0x3c, 0x2f, 0x74, 0x3e])).warning).toBe(
      'no character set declared and not valid UTF-8 (1 invalid byte sequence(s), the first at byte 3); read as windows-1252',
    );
  });
});
