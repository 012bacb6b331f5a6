/**
 * Catches the one easy mistake with transactions: calling the store itself
 * inside `store.transaction(fn)`. On the embedded engine that call would wait
 * for the transaction to finish — forever; on the server it would run on
 * another connection and not see the uncommitted rows. Both stores throw.
 */
import { AsyncLocalStorage } from 'node:async_hooks';

export class TransactionGuard {
  private readonly active = new AsyncLocalStorage<true>();

  /** Run `fn` marked as inside this store's transaction. */
  run<T>(fn: () => Promise<T>): Promise<T> {
    return this.active.run(true, fn);
  }

  /** Throw when called from inside one of this store's transactions. */
  check(what: string): void {
    if (this.active.getStore()) {
      throw new Error(`${what} was called on the store inside store.transaction(); use the transaction handle (tx) instead`);
    }
  }
}
