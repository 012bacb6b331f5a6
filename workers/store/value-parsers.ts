/**
 * Text-format value parsers shared by both stores, so that the same row reads
 * back as the same JavaScript value from the PostgreSQL server (pg) and from the
 * embedded engine (PGlite):
 *
 * - int8 / count(*) / numeric → number (ids and counts stay far below 2^53);
 * - timestamptz / timestamp   → ISO 8601 UTC string 'YYYY-MM-DDTHH:MM:SS.sssZ'
 *   (microseconds are truncated to milliseconds);
 * - date                      → 'YYYY-MM-DD' string (never a local-midnight Date);
 * - jsonb / json              → parsed object (both drivers' default);
 * - bytea                     → Uint8Array (hex or escape output);
 * - arrays of these           → arrays of the same element values.
 */

/** PostgreSQL type OIDs (pg_type.oid) this module handles. */
export const PG_OID = {
  BYTEA: 17,
  INT8: 20,
  NUMERIC: 1700,
  DATE: 1082,
  TIMESTAMP: 1114,
  TIMESTAMPTZ: 1184,
  INT8_ARRAY: 1016,
  NUMERIC_ARRAY: 1231,
  DATE_ARRAY: 1182,
  TIMESTAMP_ARRAY: 1115,
  TIMESTAMPTZ_ARRAY: 1185,
} as const;

/** int8 / numeric text → number ('NaN' → NaN, as PostgreSQL numeric allows it). */
export function parseNumberText(text: string): number {
  return Number(text);
}

// PostgreSQL output with DateStyle ISO: "2024-07-14 13:30:00.123456+00",
// "+05:30", "+05:30:15", optional " BC"; timestamp (without zone) has no offset.
const TIMESTAMP_RE =
  /^(\d{4,})-(\d{2})-(\d{2})[ T](\d{2}):(\d{2}):(\d{2})(?:\.(\d{1,6}))?(?:([+-])(\d{2})(?::?(\d{2}))?(?::?(\d{2}))?)?( BC)?$/;

/**
 * Parse PostgreSQL's ISO text of a timestamptz (or a timestamp, read as UTC)
 * into an ISO 8601 UTC string with milliseconds. 'infinity' and '-infinity'
 * come back unchanged; so does any text this parser does not recognise, rather
 * than a wrong instant.
 */
export function parseTimestampText(text: string): string {
  const m = TIMESTAMP_RE.exec(text);
  if (!m) return text;
  let year = Number(m[1]);
  if (m[12]) year = 1 - year; // 1 BC is astronomical year 0
  const ms = m[7] ? Math.floor(Number(m[7].padEnd(6, '0')) / 1000) : 0;
  const d = new Date(0);
  // setUTCFullYear, not Date.UTC: Date.UTC maps years 0-99 to 1900-1999.
  d.setUTCFullYear(year, Number(m[2]) - 1, Number(m[3]));
  d.setUTCHours(Number(m[4]), Number(m[5]), Number(m[6]), ms);
  if (m[8]) {
    const sign = m[8] === '-' ? -1 : 1;
    const offsetSeconds = sign * (Number(m[9]) * 3600 + Number(m[10] ?? 0) * 60 + Number(m[11] ?? 0));
    d.setTime(d.getTime() - offsetSeconds * 1000);
  }
  return Number.isNaN(d.getTime()) ? text : d.toISOString();
}

/** date text is already 'YYYY-MM-DD' (DateStyle ISO); keep it a string. */
export function parseDateText(text: string): string {
  return text;
}

/**
 * bytea text → its bytes. PostgreSQL prints bytea as hex (a backslash, 'x', then two hex digits a
 * byte; the default bytea_output) or, with bytea_output = escape, as text where a backslash is
 * doubled and other bytes may be a backslash and three octal digits
 * (PostgreSQL manual, "Binary Data Types"). Hex is decoded by Buffer's native decoder:
 * PGlite's own bytea parser takes ~120 ns a byte, 0.6 s for 5 MB against 26 ms here, and the
 * district table by date of a year on 1,000 districts is 20 MB of bytea.
 */
export function parseByteaText(text: string): Uint8Array {
  if (text.startsWith('\\x')) {
    const hex = text.slice(2);
    const bytes = Buffer.from(hex, 'hex');
    if (bytes.length * 2 !== hex.length) throw new Error(`bytea text is not whole hex digits: ${JSON.stringify(text.slice(0, 40))}`);
    return new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.length);
  }
  const out = new Uint8Array(text.length);
  let n = 0;
  for (let i = 0; i < text.length;) {
    if (text.charCodeAt(i) !== 92) {
      out[n++] = text.charCodeAt(i++);
    } else if (text.charCodeAt(i + 1) === 92) {
      out[n++] = 92;
      i += 2;
    } else {
      const octal = text.slice(i + 1, i + 4);
      if (!/^[0-3][0-7]{2}$/.test(octal)) throw new Error(`bytea text has a bad escape at ${i}: ${JSON.stringify(text.slice(i, i + 4))}`);
      out[n++] = parseInt(octal, 8);
      i += 4;
    }
  }
  return out.slice(0, n);
}

/** Element parsers by scalar OID, used directly (PGlite) and per element (pg arrays). */
export const SCALAR_PARSERS: Readonly<Record<number, (text: string) => unknown>> = {
  [PG_OID.BYTEA]: parseByteaText,
  [PG_OID.INT8]: parseNumberText,
  [PG_OID.NUMERIC]: parseNumberText,
  [PG_OID.DATE]: parseDateText,
  [PG_OID.TIMESTAMP]: parseTimestampText,
  [PG_OID.TIMESTAMPTZ]: parseTimestampText,
};

/** Array OID → element OID for the arrays pg must be told about. */
export const ARRAY_ELEMENT_OID: Readonly<Record<number, number>> = {
  [PG_OID.INT8_ARRAY]: PG_OID.INT8,
  [PG_OID.NUMERIC_ARRAY]: PG_OID.NUMERIC,
  [PG_OID.DATE_ARRAY]: PG_OID.DATE,
  [PG_OID.TIMESTAMP_ARRAY]: PG_OID.TIMESTAMP,
  [PG_OID.TIMESTAMPTZ_ARRAY]: PG_OID.TIMESTAMPTZ,
};
