/**
 * CSV as RFC 4180 describes it: CRLF line ends, fields quoted when they hold a comma, quote, CR or
 * LF, quotes doubled. Cells that a spreadsheet would run as a formula get a leading apostrophe
 * (OWASP "CSV Injection" guidance), since notes and loop names are typed by people.
 */
const FORMULA_START = /^[=+\-@\t\r]/;

export function csvField(value: string | number | null): string {
  let text = value === null ? '' : String(value);
  if (FORMULA_START.test(text)) text = `'${text}`;
  return /[",\r\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export function csvLine(fields: ReadonlyArray<string | number | null>): string {
  return `${fields.map(csvField).join(',')}\r\n`;
}
