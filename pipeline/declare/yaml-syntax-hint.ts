// What to do about a YAML syntax error, from the parser's error code: the usual slips of a hand-written declaration.

/** One line of advice for a parse error of the `yaml` package (its `code`, and its message where one code covers several slips). */
export function syntaxHint(code: string, message: string): string {
  switch (code) {
    case 'TAB_AS_INDENT':
      return 'indent with spaces: YAML does not allow tabs there';
    case 'BAD_INDENT':
      if (/end with a [\]}]/.test(message)) return `close the ${message.includes(']') ? '[' : '{'} opened before this line, or keep the whole list on one line`;
      return 'indent this line with as many spaces as the other keys or list items at its level (spaces only, never tabs)';
    case 'MISSING_CHAR':
      if (/quote/.test(message)) return 'close the quote opened here (a quote inside a quoted value is written \\" between double quotes, \'\' between single ones)';
      if (/indicator/.test(message)) return 'start each list item with "- ", and indent it like the items beside it';
      return 'check this line for an unclosed quote or bracket';
    case 'BLOCK_AS_IMPLICIT_KEY':
    case 'MULTILINE_IMPLICIT_KEY':
      return 'write one key a line as "key: value", with a space after the colon; quote a value that holds ": " itself';
    case 'DUPLICATE_KEY':
      return 'give each key once in its map';
    case 'BAD_SCALAR_START':
      return 'quote the value: a plain value cannot start with @ or `';
    default:
      return 'check this line and the one before it for a missing colon (key: value) or space after a colon or dash, an unclosed quote or bracket, or an indentation that differs from the lines beside it';
  }
}
