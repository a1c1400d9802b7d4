/**
 * Text from input files (labels, column names, tokens quoted in messages) may hold control
 * characters; printed raw they could move the cursor, clear the screen or reorder text on a
 * terminal. Messages show them escaped instead.
 */

/**
 * `text` with every control character escaped, except the line feed that separates lines:
 * C0 controls (U+0000–U+001F), DEL (U+007F) and C1 controls (U+0080–U+009F) as \xNN, and the
 * bidirectional formatting characters (U+061C, U+200E–U+200F, U+202A–U+202E, U+2066–U+2069;
 * Unicode Standard Annex #9) as \u{NNNN}.
 */
export function printable(text: string): string {
  return text.replace(/[\u0000-\u0009\u000b-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/g, (c) => {
    const code = c.codePointAt(0)!;
    return code < 0x100 ? `\\x${code.toString(16).padStart(2, '0')}` : `\\u{${code.toString(16)}}`;
  });
}
