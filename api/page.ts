/**
 * The web page at `/`: the files Vite built from api/web/ into dist/web/
 * (index.html and its hashed scripts and styles under /assets/), served by
 * @fastify/static. The page itself reads only the API of this server.
 *
 * The built files hold no inline script or style and load nothing from another
 * origin, so they work under the Content-Security-Policy of app.ts ('self').
 * Hashed assets may be cached for long; index.html is checked every time.
 */
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import fastifyStatic from '@fastify/static';
import type { FastifyInstance } from 'fastify';

/**
 * The folder of the built page: dist/web beside the compiled API (dist/api/page.js)
 * or in the build output of the project when the sources run directly (api/page.ts).
 * null when the page has not been built.
 */
export function builtPageFolder(): string | null {
  const here = path.dirname(fileURLToPath(import.meta.url));
  for (const candidate of [path.join(here, '..', 'web'), path.join(here, '..', 'dist', 'web')]) {
    if (existsSync(path.join(candidate, 'index.html'))) return candidate;
  }
  return null;
}

/** Serve the page at `/` and its files; without a build, `/` says how to make one. */
export function registerPage(app: FastifyInstance, folder: string | null = builtPageFolder()): void {
  if (folder === null) {
    app.get('/', async (_req, reply) => {
      reply.status(503).type('text/plain; charset=utf-8');
      return 'The web page has not been built. Run "npm run build" in the heatledger folder, then start "heatledger serve" again. The API answers under /api/.\n';
    });
    return;
  }
  void app.register(fastifyStatic, {
    root: folder,
    prefix: '/',
    wildcard: false, // a route per built file, found once at start: nothing else on disk is reachable
    index: false,
    maxAge: '365d',
    immutable: true,
    setHeaders: (res, filePath) => {
      if (path.basename(filePath) === 'index.html') res.header('cache-control', 'no-cache');
    },
  });
  app.get('/', { schema: { hide: true } }, async (_req, reply) => reply.sendFile('index.html', { maxAge: 0, immutable: false }));
}
