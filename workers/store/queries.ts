/**
 * Named SQL queries: one statement per file in sql/queries/<name>.sql, read
 * once and cached. The API and the CLI run the same files, so a table means
 * the same thing everywhere.
 */
import fs from 'node:fs';
import path from 'node:path';
import { sqlDir } from './paths.js';

const cache = new Map<string, string>();
const NAME_RE = /^[a-z0-9_]+$/;

/**
 * The text of sql/queries/<name>.sql. Throws Error for a name that is not
 * [a-z0-9_]+ or has no file (a programming fault, not user input).
 *
 * @example
 *   const rows = await store.query(namedQuery('district_table_year'), [2024, null]);
 */
export function namedQuery(name: string): string {
  const hit = cache.get(name);
  if (hit !== undefined) return hit;
  if (!NAME_RE.test(name)) throw new Error(`named query "${name}" must be lower-case letters, digits and _`);
  const file = path.join(sqlDir(), 'queries', `${name}.sql`);
  if (!fs.existsSync(file)) throw new Error(`no named query "${name}" (expected ${file})`);
  const text = fs.readFileSync(file, 'utf8');
  cache.set(name, text);
  return text;
}
