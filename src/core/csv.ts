// Comma-separated values as RFC 4180 defines them: fields may be quoted, a quoted field may hold commas,
// line breaks and doubled quotes (""), and records end at CRLF or LF. Used for labels.csv.

export function parseCsv(text: string): string[][] {
  const records: string[][] = [];
  let record: string[] = [];
  let field = '';
  let quoted = false;
  let i = text.charCodeAt(0) === 0xfeff ? 1 : 0; // a byte order mark is not part of the first field
  const endField = () => {
    record.push(field);
    field = '';
  };
  const endRecord = () => {
    endField();
    if (record.length > 1 || record[0] !== '') records.push(record);
    record = [];
  };
  for (; i < text.length; i++) {
    const c = text[i];
    if (quoted) {
      if (c === '"' && text[i + 1] === '"') {
        field += '"';
        i++;
      } else if (c === '"') quoted = false;
      else field += c;
    } else if (c === '"' && field === '') quoted = true;
    else if (c === ',') endField();
    else if (c === '\n') endRecord();
    else if (c === '\r' && text[i + 1] === '\n') {
      endRecord();
      i++;
    } else field += c;
  }
  if (field !== '' || record.length > 0) endRecord();
  return records;
}

/** One field as RFC 4180 writes it: quoted (quotes doubled) when it holds a comma, a quote or a line break. */
export function csvField(s: string): string {
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}
