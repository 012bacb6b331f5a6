/**
 * The writers of export files, in one place: CSV, GeoJSON, Parquet and the
 * sidecar JSON beside each. Numbers are rounded here, once, by the kind of
 * their column (workers/core/export/tidy.ts `roundingOf`, workers/format.ts
 * PRECISION). Every file is written to a temporary name in the same folder and
 * renamed into place, so a reader never sees half a file.
 *
 * Parquet: hyparquet-writer — pure JavaScript with a single dependency (its
 * companion reader) and no native or WebAssembly build, so it installs
 * wherever Node runs; it is maintained (frequent releases) and writes typed,
 * nullable columns with DATE and UTC TIMESTAMP logical types and Snappy
 * compression, which DuckDB, Arrow and pandas read. The heavier choices
 * (parquet-wasm needs Arrow tables and a WebAssembly module; the parquetjs forks
 * carry a Thrift and compression stack) bring nothing these small tables need.
 */
import { randomBytes } from 'node:crypto';
import { rename, rm, stat, writeFile } from 'node:fs/promises';
import { basename, dirname, resolve } from 'node:path';
import { parquetWriteBuffer } from 'hyparquet-writer';
import { InputError } from '../core/errors.js';
import { epochDayOf } from '../core/epoch-day.js';
import { columnType, roundingOf, type DistrictFeatureCollection } from '../core/export/tidy.js';
import { PRECISION, roundNumber, toCsv, type Row } from '../format.js';

type Value = string | number | null;

/** The value rounded by its column's kind (numbers of other columns as they are). */
export function roundCell(column: string, v: Value | undefined): Value {
  if (v === undefined) return null;
  if (typeof v !== 'number') return v;
  const kind = roundingOf(column);
  return kind ? roundNumber(v, PRECISION[kind]) : Number.isFinite(v) ? v : null;
}

function roundRows(rows: readonly Record<string, Value>[], columns: readonly string[]): Record<string, Value>[] {
  return rows.map((r) => Object.fromEntries(columns.map((c) => [c, roundCell(c, r[c])])));
}

/**
 * Check an output path before any work: its folder must exist and be a folder,
 * and the path itself must not be a folder. InputError naming `--out`.
 */
export async function checkOutPath(out: string, option = '--out'): Promise<string> {
  const path = resolve(out);
  const folder = dirname(path);
  const info = await stat(folder).catch(() => null);
  if (!info) throw new InputError(`${option} ${out}: the folder ${folder} does not exist; create it first or choose another path`);
  if (!info.isDirectory()) throw new InputError(`${option} ${out}: ${folder} is not a folder`);
  const self = await stat(path).catch(() => null);
  if (self?.isDirectory()) throw new InputError(`${option} ${out} is a folder; give a file name such as ${out.replace(/[\\/]+$/, '')}/table.csv`);
  return path;
}

/** Write `data` to `path` through a temporary file in the same folder (renamed into place). */
async function writeAtomically(path: string, data: string | Uint8Array): Promise<void> {
  const tmp = `${dirname(path)}/.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`;
  try {
    await writeFile(tmp, data);
    await rename(tmp, path);
  } catch (e) {
    await rm(tmp, { force: true });
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'EACCES' || code === 'EPERM' || code === 'EROFS') throw new InputError(`cannot write ${path}: permission denied (${code})`);
    if (code === 'ENOSPC') throw new InputError(`cannot write ${path}: no space left on the device`);
    throw e;
  }
}

/** RFC 4180 CSV with a header line, numbers rounded by column. */
export async function writeCsvFile(path: string, columns: readonly string[], rows: readonly Record<string, Value>[]): Promise<void> {
  await writeAtomically(path, toCsv(roundRows(rows, columns) as Row[], columns));
}

/**
 * Parquet with typed, nullable columns: text as UTF-8 strings, counts as INT32,
 * values as DOUBLE (rounded like the CSV), `date` as DATE and `acquired_at` as a
 * UTC timestamp in milliseconds. Key-value metadata `heatledger.version`.
 */
export async function writeParquetFile(
  path: string, columns: readonly string[], rows: readonly Record<string, Value>[], version: string,
): Promise<void> {
  const rounded = roundRows(rows, columns);
  // Types come from the explicit schema below; the data are the values in the form it takes.
  const columnData = columns.map((name) => {
    const type = columnType(name);
    const values = rounded.map((r) => r[name]);
    if (type === 'date') return { name, data: values.map((v) => (v === null ? null : epochDayOf(String(v)))) };
    if (type === 'timestamp') return { name, data: values.map((v) => (v === null ? null : new Date(String(v)))) };
    if (type === 'string') return { name, data: values.map((v) => (v === null ? null : String(v))) };
    return { name, data: values.map((v) => (v === null ? null : Number(v))) };
  });
  const schema = [
    { name: 'root', num_children: columns.length },
    ...columnData.map((c) => {
      const t = columnType(c.name);
      if (t === 'date') return { name: c.name, type: 'INT32' as const, converted_type: 'DATE' as const, repetition_type: 'OPTIONAL' as const };
      // UTC instants: readers show them as timestamps with time zone (isAdjustedToUTC)
      if (t === 'timestamp') return { name: c.name, type: 'INT64' as const, logical_type: { type: 'TIMESTAMP' as const, isAdjustedToUTC: true, unit: 'MILLIS' as const }, repetition_type: 'OPTIONAL' as const };
      if (t === 'string') return { name: c.name, type: 'BYTE_ARRAY' as const, converted_type: 'UTF8' as const, repetition_type: 'OPTIONAL' as const };
      if (t === 'int') return { name: c.name, type: 'INT32' as const, repetition_type: 'OPTIONAL' as const };
      return { name: c.name, type: 'DOUBLE' as const, repetition_type: 'OPTIONAL' as const };
    }),
  ];
  const buffer = parquetWriteBuffer({
    columnData,
    schema,
    createdBy: `heatledger version ${version}`,
    kvMetadata: [{ key: 'heatledger.version', value: version }],
  });
  await writeAtomically(path, new Uint8Array(buffer));
}

/** The district GeoJSON (RFC 7946), properties rounded by name. */
export async function writeGeoJsonFile(path: string, collection: DistrictFeatureCollection): Promise<void> {
  const rounded = {
    ...collection,
    features: collection.features.map((f) => ({
      ...f,
      properties: Object.fromEntries(Object.entries(f.properties).map(([k, v]) => [k, roundCell(k, v)])),
    })),
  };
  await writeAtomically(path, JSON.stringify(rounded) + '\n');
}

/** The sidecar of an export: `PATH.json` beside `PATH`. */
export function sidecarPath(path: string): string {
  return `${path}.json`;
}

/** Write the sidecar (snake_case keys as given; the caller builds it). */
export async function writeSidecarFile(path: string, sidecar: unknown): Promise<void> {
  await writeAtomically(sidecarPath(path), JSON.stringify(sidecar, null, 2) + '\n');
}
