/**
 * Read queries over a local socket. The process that owns an embedded store
 * answers, on a Unix domain socket (mode 0600), the read queries of other
 * heatledger processes on the same data directory, so that `status`, `table`
 * and `serve` can watch while an ingest writes, without a second process ever
 * opening the database files.
 *
 * Protocol: one JSON object per line each way. Requests carry an `id`:
 *   { id, op: 'query', sql, params }   → { id, rows } | { id, error }
 *   { id, op: 'handover', to: LockOwner } → { id, ok: true } | { id, error }
 * A query must be one statement that starts with SELECT, WITH, VALUES, TABLE or
 * SHOW; the owner runs it inside a READ ONLY transaction that it always rolls
 * back, so a reader cannot change the store or the owner's session.
 */
import fs from 'node:fs';
import net from 'node:net';
import { ServiceError } from '../core/errors.js';
import type { LockOwner } from './lock.js';

export interface ReadHandlers {
  query(sql: string, params: unknown[]): Promise<unknown[]>;
  /** Hand the store to `to` (a writer): absent when this owner never hands over. */
  handover?(to: LockOwner): Promise<void>;
}

const READ_ONLY_START = /^\s*(?:(?:--[^\n]*(?:\n|$)|\/\*[\s\S]*?\*\/)\s*)*(select|with|values|table|show)\b/i;

/** True when `sql` starts like a read query (the READ ONLY transaction is the real guard). */
export function looksReadOnly(sql: string): boolean {
  return READ_ONLY_START.test(sql);
}

// JSON cannot carry NaN/±Infinity or bytes: encoded as tagged objects so nothing changes on the way.
function replacer(_key: string, v: unknown): unknown {
  if (typeof v === 'number' && !Number.isFinite(v)) return { $hlNumber: String(v) };
  if (v instanceof Uint8Array) return { $hlBytes: Buffer.from(v).toString('base64') };
  return v;
}
function reviver(_key: string, v: unknown): unknown {
  if (v && typeof v === 'object' && !Array.isArray(v)) {
    const o = v as Record<string, unknown>;
    const keys = Object.keys(o);
    if (keys.length === 1 && typeof o.$hlNumber === 'string') return Number(o.$hlNumber);
    if (keys.length === 1 && typeof o.$hlBytes === 'string') return new Uint8Array(Buffer.from(o.$hlBytes, 'base64'));
  }
  return v;
}
export function encodeMessage(m: unknown): string {
  return JSON.stringify(m, replacer) + '\n';
}
export function decodeMessage(line: string): unknown {
  return JSON.parse(line, reviver);
}

/** Split a byte stream into lines. */
function onLines(socket: net.Socket, fn: (line: string) => void): void {
  let buffered = '';
  socket.setEncoding('utf8');
  socket.on('data', (chunk: string) => {
    buffered += chunk;
    let nl: number;
    while ((nl = buffered.indexOf('\n')) >= 0) {
      const line = buffered.slice(0, nl);
      buffered = buffered.slice(nl + 1);
      if (line.trim()) fn(line);
    }
  });
}

export interface ReadServer {
  readonly socketPath: string;
  /** Stop listening and drop every connection (pending answers are lost; readers ask again). */
  close(): Promise<void>;
  /** Remove the socket file if it is still this server's (synchronous, for an 'exit' listener). */
  removeSocketFile(): void;
}

/** Listen on `socketPath` (a leftover file there is removed: the caller holds the store lock). */
export async function startReadServer(socketPath: string, handlers: ReadHandlers): Promise<ReadServer> {
  fs.rmSync(socketPath, { force: true });
  const sockets = new Set<net.Socket>();
  const server = net.createServer((socket) => {
    sockets.add(socket);
    socket.on('close', () => sockets.delete(socket));
    socket.on('error', () => socket.destroy());
    onLines(socket, (line) => {
      let req: { id?: unknown; op?: unknown; sql?: unknown; params?: unknown; to?: unknown };
      try {
        req = decodeMessage(line) as typeof req;
      } catch {
        socket.destroy();
        return;
      }
      void answer(req).then(
        (reply) => { if (!socket.destroyed) socket.write(encodeMessage({ id: req.id, ...reply })); },
        (e: unknown) => {
          if (!socket.destroyed) socket.write(encodeMessage({ id: req.id, error: { name: (e as Error)?.name ?? 'Error', message: (e as Error)?.message ?? String(e), ownerGone: e instanceof OwnerGoneError } }));
        },
      );
    });
  });
  async function answer(req: { op?: unknown; sql?: unknown; params?: unknown; to?: unknown }): Promise<Record<string, unknown>> {
    if (req.op === 'query') {
      if (typeof req.sql !== 'string' || !looksReadOnly(req.sql)) throw new ServiceError('only read queries (SELECT, WITH, VALUES, TABLE, SHOW) are answered over the store socket');
      const params = Array.isArray(req.params) ? req.params : [];
      return { rows: await handlers.query(req.sql, params) };
    }
    if (req.op === 'handover') {
      if (!handlers.handover) throw new ServiceError('this owner does not hand the store over');
      await handlers.handover(req.to as LockOwner);
      return { ok: true };
    }
    throw new ServiceError(`unknown request ${JSON.stringify(req.op)} on the store socket`);
  }
  await new Promise<void>((resolve, reject) => {
    server.once('error', (e) => reject(new ServiceError(`cannot listen on the store socket ${socketPath}: ${e.message}`, { cause: e })));
    server.listen(socketPath, () => resolve());
  });
  fs.chmodSync(socketPath, 0o600);
  // the next owner listens on the same path: remove the file only while it is still ours
  const inode = fs.statSync(socketPath).ino;
  const removeSocketFile = () => {
    try {
      if (fs.statSync(socketPath).ino === inode) fs.rmSync(socketPath, { force: true });
    } catch { /* gone already */ }
  };
  let closed = false;
  return {
    socketPath,
    async close() {
      if (closed) return;
      closed = true;
      const done = new Promise<void>((resolve) => server.close(() => resolve()));
      for (const s of sockets) s.destroy();
      await done;
      removeSocketFile();
    },
    removeSocketFile,
  };
}

/** The owner's socket went away (it exited or handed the store over): ask again after finding the new owner. */
export class OwnerGoneError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'OwnerGoneError';
  }
}

/** One connection to an owner's socket. */
export class RemoteConnection {
  private nextId = 1;
  private readonly pending = new Map<number, { resolve(v: Record<string, unknown>): void; reject(e: Error): void }>();
  private gone: string | null = null;

  private constructor(private readonly socket: net.Socket, readonly socketPath: string) {
    onLines(socket, (line) => {
      let msg: Record<string, unknown>;
      try {
        msg = decodeMessage(line) as Record<string, unknown>;
      } catch {
        socket.destroy();
        return;
      }
      const p = this.pending.get(msg.id as number);
      if (!p) return;
      this.pending.delete(msg.id as number);
      p.resolve(msg);
    });
    const fail = (why: string) => {
      if (this.gone === null) this.gone = why;
      for (const p of this.pending.values()) p.reject(new OwnerGoneError(`the store owner's socket ${socketPath} closed: ${why}`));
      this.pending.clear();
    };
    socket.on('error', (e) => fail(e.message));
    socket.on('close', () => fail('connection closed'));
  }

  /** Connect; rejects with OwnerGoneError when nobody listens there (yet). */
  static connect(socketPath: string): Promise<RemoteConnection> {
    return new Promise((resolve, reject) => {
      const socket = net.createConnection(socketPath);
      const onError = (e: Error) => reject(new OwnerGoneError(`cannot connect to the store socket ${socketPath}: ${e.message}`));
      socket.once('error', onError);
      socket.once('connect', () => {
        socket.off('error', onError);
        resolve(new RemoteConnection(socket, socketPath));
      });
    });
  }

  get closed(): boolean {
    return this.gone !== null;
  }

  request(body: Record<string, unknown>): Promise<Record<string, unknown>> {
    if (this.gone !== null) return Promise.reject(new OwnerGoneError(`the store owner's socket ${this.socketPath} closed: ${this.gone}`));
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject });
      this.socket.write(encodeMessage({ id, ...body }));
    }).then((msg) => {
      const m = msg as Record<string, unknown>;
      if (m.error) {
        const e = m.error as { name?: string; message?: string; ownerGone?: boolean };
        if (e.ownerGone === true) throw new OwnerGoneError(e.message ?? 'the store owner left');
        throw new ServiceError(`the store owner answered: ${e.message ?? 'error'}`);
      }
      return m;
    });
  }

  async query<T>(sql: string, params?: unknown[]): Promise<T[]> {
    const reply = await this.request({ op: 'query', sql, params: params ?? [] });
    return reply.rows as T[];
  }

  close(): void {
    this.gone ??= 'closed by this process';
    this.socket.destroy();
  }
}
