/**
 * Build of the web page: api/web/index.html and its scripts and styles into
 * dist/web/, which `heatledger serve` serves at `/`. Everything the page needs
 * is bundled here (no CDN, no font service): the server's Content-Security-
 * Policy allows only its own origin.
 */
import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vite';

export default defineConfig({
  root: fileURLToPath(new URL('.', import.meta.url)),
  base: '/',
  publicDir: false,
  logLevel: 'warn',
  clearScreen: false,
  build: {
    outDir: fileURLToPath(new URL('../../dist/web', import.meta.url)),
    emptyOutDir: true,
    target: 'es2022',
    // no inline polyfill script and no data: URLs: the policy allows only files of this origin
    modulePreload: { polyfill: false },
    assetsInlineLimit: 0,
    cssCodeSplit: false,
    sourcemap: false,
  },
});
