import { parse } from 'csv-parse/sync';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { csvField, csvLine } from '../../src/outputs/csvField.ts';

describe('csvField', () => {
  it('quotes fields with comma, quote, CR or LF and doubles quotes (RFC 4180 §2.6, §2.7)', () => {
    // check: RFC 4180 section 2 rules 6 and 7
    expect(csvField('plain text')).toBe('plain text');
    expect(csvField('a,b')).toBe('"a,b"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField('line\r\nbreak')).toBe('"line\r\nbreak"');
    expect(csvField('only\nLF')).toBe('"only\nLF"');
    expect(csvField('only\rCR')).toBe('"only\rCR"');
    expect(csvField('')).toBe('');
    expect(csvLine(['a', '"b"'])).toBe('a,"b"\r\n');
  });

  it("prefixes ' to text starting with = + - @ tab or CR (OWASP CSV injection)", () => {
    // check: OWASP CSV Injection guidance (https://owasp.org/www-community/attacks/CSV_Injection;
    // trigger characters = + - @ 0x09 0x0D recalled from memory)
    expect(csvField('=1+2')).toBe("'=1+2");
    expect(csvField('+49 30')).toBe("'+49 30");
    expect(csvField('-lobby')).toBe("'-lobby");
    expect(csvField('@SUM(A1)')).toBe("'@SUM(A1)");
    expect(csvField('\tindent')).toBe("'\tindent");
    expect(csvField('\rstart')).toBe('"\'\rstart"');
    expect(csvField('=HYPERLINK("http://x","y")')).toBe('"\'=HYPERLINK(""http://x"",""y"")"');
    expect(csvField('a=b')).toBe('a=b');
    expect(csvField("'already")).toBe("'already");
    expect(csvField('=raw', { formulaGuard: false })).toBe('=raw');
  });

  it('round-trips arbitrary text through csv-parse', () => {
    // check: RFC 4180; csv-parse as independent parser
    const text = fc.string({ unit: fc.constantFrom('a', 'Z', ' ', ',', '"', '\r', '\n', '\r\n', 'é', '中', '😀', '=', '-', '\t', "'"), maxLength: 20 });
    fc.assert(
      // RFC 4180 §2.4: every record has the same number of fields.
      fc.property(fc.integer({ min: 1, max: 5 }).chain((n) => fc.array(fc.array(text, { minLength: n, maxLength: n }), { minLength: 1, maxLength: 6 })), (records) => {
        // A record of one empty field would be an empty line, which no CSV reader keeps.
        fc.pre(records.every((r) => r.length > 1 || r[0] !== ''));
        const csv = records.map((r) => csvLine(r.map((f) => csvField(f, { formulaGuard: false })))).join('');
        expect(parse(csv, { record_delimiter: '\r\n' })).toEqual(records);
        const guarded = records.map((r) => csvLine(r.map((f) => csvField(f)))).join('');
        const expected = records.map((r) => r.map((f) => (/^[=+\-@\t\r]/.test(f) ? `'${f}` : f)));
        expect(parse(guarded, { record_delimiter: '\r\n' })).toEqual(expected);
      }),
      { numRuns: 300 },
    );
  });
});
