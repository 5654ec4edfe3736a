// What a reason shown to a user must never contain: the text of a JavaScript runtime error.

export const RAW_JS =
  /Cannot read|undefined|is not a function|is not defined|TypeError|RangeError|Invalid array length|null/;
