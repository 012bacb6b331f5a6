/**
 * The one database interface of heatledger, apart from how a store is opened
 * (./store.ts): both drivers (./pg.ts, ./pglite.ts) and every module that runs
 * SQL import these types from here, so no driver imports the module that opens it.
 */
/** Anything that runs one parameterised SQL statement ($1, $2, ...) and returns its rows. */
export interface Queryable {
  query<T = Record<string, unknown>>(sql: string, params?: unknown[]): Promise<T[]>;
}

/** The handle inside `Store.transaction`: one connection, one open transaction. */
export interface Transaction extends Queryable {
  /** Run several `;`-separated statements without parameters. */
  exec(sql: string): Promise<void>;
}

export interface Store extends Queryable {
  readonly kind: 'pg' | 'pglite';
  /** Run several `;`-separated statements without parameters. */
  exec(sql: string): Promise<void>;
  /**
   * Run `fn` inside BEGIN … COMMIT on one connection; any throw rolls back and
   * is re-thrown. Inside `fn` use `tx`, never the store itself (that would see
   * other data on the server, or wait forever on the embedded engine — both
   * stores throw instead).
   */
  transaction<T>(fn: (tx: Transaction) => Promise<T>): Promise<T>;
  /**
   * Run `fn` while holding a lock named `key` that other processes on the same
   * database also respect (a PostgreSQL advisory lock on the server; the
   * embedded engine has one process, so a local mutex). Used by the migrations runner.
   */
  withLock?<T>(key: string, fn: () => Promise<T>): Promise<T>;
  close(): Promise<void>;
}
