/**
 * `node dist/workers/store/template-build.js` (run by `npm run build`): make the
 * prepared template of a new embedded store (./template.ts) in the build
 * output, unless the one there already matches the migrations and the PGlite
 * version. The new template is made in a folder of its own and put in place
 * whole, so a store opening meanwhile finds either the old one or the new one.
 */
import fs from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import { writePgliteTemplate } from './pglite.js';
import { templateDir, usableTemplate, type TemplateRecord } from './template.js';

/** Make the template in `dir` unless a usable one is there; returns the record of a new one, or null when it was current. */
export async function ensureStoreTemplate(dir: string = templateDir()): Promise<TemplateRecord | null> {
  if (usableTemplate(dir)) return null;
  const fresh = `${dir}.new-${process.pid}`;
  const old = `${dir}.old-${process.pid}`;
  fs.rmSync(fresh, { recursive: true, force: true });
  try {
    const record = await writePgliteTemplate(fresh);
    if (fs.existsSync(dir)) fs.renameSync(dir, old);
    fs.renameSync(fresh, dir);
    fs.rmSync(old, { recursive: true, force: true });
    return record;
  } finally {
    fs.rmSync(fresh, { recursive: true, force: true });
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const started = performance.now();
  ensureStoreTemplate().then(
    (record) => {
      if (!record) return;
      const seconds = ((performance.now() - started) / 1000).toFixed(1);
      process.stdout.write(`store template: ${path.relative(process.cwd(), templateDir())} (migrations ${record.migrations.join(', ')}; PGlite ${record.pglite}; ${seconds} s)\n`);
    },
    (e: unknown) => {
      process.stderr.write(`cannot make the store template: ${(e as Error)?.stack ?? String(e)}\n`);
      process.exitCode = 1;
    },
  );
}
