/** First line of a statement, for error messages. */
export function sqlHead(sql: string): string {
  const line = sql.trim().split('\n').find((l) => l.trim() !== '' && !l.trim().startsWith('--')) ?? '';
  return line.length > 120 ? `${line.slice(0, 117)}...` : line.trim();
}
