/**
 * Escaping of untrusted text (labels, paths, species names read from input files) for HTML and
 * for XML/SVG.
 */

/**
 * C0 and C1 control characters that HTML and XML 1.0 do not accept as document text: everything
 * in U+0000–U+001F except TAB, LF, FF, CR, plus U+007F–U+009F (XML 1.0 §2.2 "Char"; WHATWG HTML
 * §13.2.3.5 "control-character-in-input-stream"). FF is allowed by HTML but not XML, so the XML
 * variant removes it too.
 */
const HTML_CONTROLS = /[\u0000-\u0008\u000B\u000E-\u001F\u007F-\u009F]/g;
const XML_CONTROLS = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F-\u009F]/g;

/**
 * Replace characters that may not appear in HTML text with U+FFFD REPLACEMENT CHARACTER
 * (see HTML_CONTROLS above for the set and the sources).
 */
export function stripControls(s: string): string {
  return s.replace(HTML_CONTROLS, '\uFFFD');
}

/**
 * Replace characters that may not appear in XML 1.0 documents (XML 1.0 §2.2, production [2]
 * "Char") with U+FFFD, so a label taken from an input file always yields a well-formed SVG.
 */
export function stripXmlControls(s: string): string {
  return s.replace(XML_CONTROLS, '\uFFFD');
}

/**
 * Escape a string for use as HTML text or inside a double- or single-quoted attribute value:
 * & → &amp;, < → &lt;, > → &gt;, " → &quot;, ' → &#39;. These five are the characters that can
 * start markup or a character reference, or end an attribute value (WHATWG HTML, "Writing HTML
 * documents": "Attributes", "Character references"; the serializer's "escaping a string"
 * algorithm covers & < > and "; ' is added for single-quoted attributes; XML 1.0 §2.4 names the
 * same set). Control characters not allowed in
 * HTML are replaced by U+FFFD (stripControls). Call it on every string that came from an input
 * file or the command line before it goes into the page.
 */
export function escapeHtml(s: string): string {
  return stripControls(String(s)).replace(/[&<>"']/g, (c) => ESCAPES[c]);
}

const ESCAPES: Record<string, string> = {
  '&': '&amp;',
  '<': '&lt;',
  '>': '&gt;',
  '"': '&quot;',
  "'": '&#39;',
};
