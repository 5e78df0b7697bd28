/**
 * JSON for a `<script type="application/json">` block. JSON.stringify leaves `<`, `>` and `&` as they
 * are, so a cell holding `</script>` or `<!--` could end the block or change how the HTML parser reads
 * it; written as \u003c, \u003e and \u0026 they parse back to the same string and the parser never sees
 * them. U+2028 and U+2029 are escaped too, so the text is also safe to paste into a script.
 *
 * @example
 *   embedJson({ v: '</script>' }) // '{"v":"\\u003c/script\\u003e"}'
 */
export function embedJson(value: unknown): string {
  return JSON.stringify(value).replace(/[<>&\u2028\u2029]/g, (ch) => `\\u${ch.charCodeAt(0).toString(16).padStart(4, '0')}`);
}
