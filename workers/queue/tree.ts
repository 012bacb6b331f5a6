/**
 * Job trees: validation, flattening and the reuse rule both runners share.
 */
import { sha256Hex } from '../core/hash.js';
import { InputError } from '../core/errors.js';
import type { JobSpec } from './types.js';

/** A node of a flattened tree. */
export interface FlatNode {
  spec: JobSpec;
  parentId: string | null;
  childIds: string[];
}

// BullMQ rejects ':' in custom ids and ids that look like integers (they clash
// with its own counter); the same rule applies in-process so trees are portable.
const ID_PATTERN = /^[A-Za-z0-9._-]{1,256}$/;
const NAME_PATTERN = /^[A-Za-z][A-Za-z0-9_-]{0,63}$/;

/**
 * Check a job tree and flatten it in pre-order (root first).
 * Throws InputError naming `source` when an id or name is malformed or an id repeats.
 * @example flattenTree({ name: 'sum', id: 'r1', data: null, children: [{ name: 'hash', id: 'c1', data: 1 }] }).length // 2
 */
export function flattenTree(root: JobSpec, source = 'job tree'): FlatNode[] {
  const out: FlatNode[] = [];
  const seen = new Set<string>();
  const stack: { spec: JobSpec; parentId: string | null }[] = [{ spec: root, parentId: null }];
  while (stack.length > 0) {
    const { spec, parentId } = stack.pop()!;
    if (spec === null || typeof spec !== 'object') {
      throw new InputError(`a job is ${spec === null ? 'null' : typeof spec}, expected an object with name, id and data`, source);
    }
    if (typeof spec.name !== 'string' || !NAME_PATTERN.test(spec.name)) {
      throw new InputError(`job name ${JSON.stringify(spec.name)} must be a letter followed by up to 63 letters, digits, '-' or '_'`, source);
    }
    if (typeof spec.id !== 'string' || !ID_PATTERN.test(spec.id) || /^\d+$/.test(spec.id)) {
      throw new InputError(`job id ${JSON.stringify(spec.id)} (${spec.name}) must be 1-256 characters of letters, digits, '.', '-' or '_' and not all digits`, source);
    }
    if (seen.has(spec.id)) throw new InputError(`job id ${spec.id} appears twice in the tree`, source);
    seen.add(spec.id);
    if (spec.children !== undefined && !Array.isArray(spec.children)) {
      throw new InputError(`children of job ${spec.id} must be an array`, source);
    }
    const children = spec.children ?? [];
    out.push({ spec, parentId, childIds: children.map((c) => c?.id) });
    for (let i = children.length - 1; i >= 0; i--) stack.push({ spec: children[i], parentId: spec.id });
  }
  return out;
}

/**
 * Ids of the jobs that need not run again: a job is reusable when it completed
 * before and every job below it is reusable too (a parent that ran while a child
 * was failed or missing is run again, together with that child).
 */
export function reusableIds(nodes: FlatNode[], completed: (id: string) => boolean): Set<string> {
  const byId = new Map(nodes.map((n) => [n.spec.id, n]));
  const reusable = new Set<string>();
  // Reverse pre-order visits every child before its parent.
  for (let i = nodes.length - 1; i >= 0; i--) {
    const n = nodes[i];
    if (completed(n.spec.id) && n.childIds.every((c) => reusable.has(c) && byId.has(c))) reusable.add(n.spec.id);
  }
  return reusable;
}

/**
 * The failure text both runners report and the store keeps: the message alone.
 * What kind of failure it was travels beside it (`failureKind`), never as a
 * class name in front of the text.
 */
export function failureMessage(e: unknown): string {
  if (e instanceof Error) return e.message;
  return String(e);
}

/**
 * A result as the other runner would hand it on: BullMQ stores results as
 * JSON, so the in-process runner passes them through JSON too (a Date becomes
 * a string in both modes; `undefined` becomes null).
 */
export function asJsonValue(value: unknown): unknown {
  if (value === undefined) return null;
  const text = JSON.stringify(value);
  return text === undefined ? null : JSON.parse(text);
}

/**
 * A content-derived job id: sha256 (hex) of the processor name and the parts
 * (strings, numbers or JSON values; e.g. a scene file's hash and the parameters).
 * @example deriveJobId('zonal', sceneSha256, { ring: 1000 }) // 'zonal-9f2c…' (64 hex digits after the name)
 */
export function deriveJobId(name: string, ...parts: unknown[]): string {
  return `${name}-${sha256Hex(JSON.stringify([name, ...parts]))}`;
}
