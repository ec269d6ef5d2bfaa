/**
 * CSV encoding per RFC 4180 (https://www.rfc-editor.org/rfc/rfc4180, section 2): records end with
 * CRLF; a field containing a comma, a double quote, CR or LF is enclosed in double quotes, and a
 * double quote inside it is written twice (`a"b` → `"a""b"`). Other fields are written as is.
 *
 * Spreadsheet formula injection: a spreadsheet that opens the file treats a cell starting with
 * `=`, `+`, `-` or `@` (and, in some, tab or CR) as a formula. OWASP's CSV Injection guidance
 * (https://owasp.org/www-community/attacks/CSV_Injection; character list recalled from memory:
 * `=`, `+`, `-`, `@`, tab 0x09, carriage return 0x0D) is to prefix such a cell with a single quote
 * `'`, which the spreadsheet shows as text. {@link csvField} does this for text fields when
 * `formulaGuard` is on; numbers we format ourselves never need it.
 */

export interface CsvFieldOptions {
  /** Prefix `'` when the text starts with `=`, `+`, `-`, `@`, tab or CR; default true. */
  readonly formulaGuard?: boolean;
}

const FORMULA_START = /^[=+\-@\t\r]/;
const NEEDS_QUOTES = /[",\r\n]/;

/** One CSV field: formula guard (optional), then RFC 4180 quoting. `csvField('a,"b"')` → `"a,""b"""`. */
export function csvField(text: string, options: CsvFieldOptions = {}): string {
  const { formulaGuard = true } = options;
  const guarded = formulaGuard && FORMULA_START.test(text) ? `'${text}` : text;
  return NEEDS_QUOTES.test(guarded) ? `"${guarded.replace(/"/g, '""')}"` : guarded;
}

/** Joins already encoded fields into one record terminated by CRLF. */
export function csvLine(fields: readonly string[]): string {
  return `${fields.join(',')}\r\n`;
}
