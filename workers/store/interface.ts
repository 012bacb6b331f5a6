/**
 * The one database interface of heatledger, apart from how a store is opened
 * (./store.ts): both drivers (./pg.ts, ./pglite.ts) and every module that runs
 * SQL import these types from here, so no driver imports the module that opens it.
 */
/** How a statement is run; a store may ignore what does not apply to it. */
export interface QueryOptions {
  /**
   * The statement is run again and again, on every scene, with parameters that
   * never call for another plan (a keyed write): the database keeps it parsed
   * and planned (a named prepared statement: per connection on the server, in
   * the embedded engine's one session) instead of parsing, analysing and
   * planning its text at every call. Never for a query whose best plan depends
   * on its parameters (a generic plan would serve them all).
   */
  prepared?: boolean;
}

/** Anything that runs one parameterised SQL statement ($1, $2, ...) and returns its rows. */
export interface Queryable {
  query<T = Record<string, unknown>>(sql: string, params?: unknown[], options?: QueryOptions): Promise<T[]>;
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
