/**
 * The installable, offline client (issue 18): vite-plugin-pwa's options. The service worker
 * (Workbox, generated at build time) precaches the app shell, the fonts (woff2), the styles, and
 * the code of the Bench and Record screens with everything they import, plus the offline kit
 * (src/offline/); other screens load from the network and say so when offline. The API is never
 * cached by the service worker: the Bench keeps its own copy in IndexedDB.
 */
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { VitePWAOptions } from 'vite-plugin-pwa';

/**
 * Lazy chunks (file name before the hash) that work offline, with what they import. The Bench's
 * dialogs load when first opened (kept out of its first load) but are cached like the Bench itself,
 * so opening one offline says what the server said rather than failing to load.
 */
export const OFFLINE_CHUNKS = ['AppShell', 'BenchView', 'MissedDialog', 'ChangePasswordDialog', 'RecordView', 'DeviceOutboxBar', 'DeviceOutboxDialog', 'offline-kit'];

/** Static imports (`import ... from "./x.js"`, `import "./x.js"`) and dynamic ones (`import("./x.js")`) of one built chunk. */
function importsOf(code: string): { static: string[]; dynamic: string[] } {
  const grab = (re: RegExp) => [...code.matchAll(re)].map((m) => m[1]);
  return { static: grab(/(?:from|import)\s*["']\.\/([^"']+\.js)["']/g), dynamic: grab(/import\(\s*["']\.\/([^"']+\.js)["']\s*\)/g) };
}

const isOfflineChunk = (file: string) => OFFLINE_CHUNKS.some((c) => file.startsWith(`${c}-`));

/** The JS files the offline screens need: the entry, the offline chunks, and what they import statically (dynamic imports only into the offline kit). */
export function offlineJs(dist: string, names: string[]): Set<string> {
  const assets = join(dist, 'assets');
  const html = readFileSync(join(dist, 'index.html'), 'utf8');
  const entry = /<script[^>]+type="module"[^>]+src="\/assets\/([^"]+\.js)"/.exec(html)?.[1];
  const queue = [...(entry ? [entry] : []), ...names.filter(isOfflineChunk)];
  const seen = new Set<string>();
  while (queue.length) {
    const f = queue.shift()!;
    if (seen.has(f) || !existsSync(join(assets, f))) continue;
    seen.add(f);
    const deps = importsOf(readFileSync(join(assets, f), 'utf8'));
    queue.push(...deps.static, ...deps.dynamic.filter(isOfflineChunk));
  }
  return seen;
}

export function pwaOptions(dist: string): Partial<VitePWAOptions> {
  return {
    registerType: 'autoUpdate',
    // Registered from src/offline/ after the Bench has shown (keeps the first load small).
    injectRegister: false,
    includeAssets: ['favicon.svg', 'icons/apple-touch-icon-180.png'],
    manifest: {
      name: 'Keepwell',
      short_name: 'Keepwell',
      description: 'Stability and shelf-life tracker for small cosmetic formulation labs',
      start_url: '/bench',
      scope: '/',
      display: 'standalone',
      background_color: '#ffffff',
      theme_color: '#1d6a66',
      icons: [
        { src: '/icons/icon-192.png', sizes: '192x192', type: 'image/png' },
        { src: '/icons/icon-512.png', sizes: '512x512', type: 'image/png' },
        { src: '/icons/maskable-512.png', sizes: '512x512', type: 'image/png', purpose: 'maskable' },
      ],
    },
    workbox: {
      globPatterns: ['index.html', 'assets/*.{js,css,woff2}'],
      // Only the latin subset of the fonts is precached (the app's own text); other subsets load when used.
      globIgnores: ['**/*-cyrillic*', '**/*-greek*', '**/*-vietnamese*', '**/*-latin-ext-*'],
      maximumFileSizeToCacheInBytes: 3 * 1024 * 1024,
      navigateFallback: '/index.html',
      navigateFallbackDenylist: [/^\/api\//],
      cleanupOutdatedCaches: true,
      // The page open when the worker first installs is controlled at once: its lazy chunks then come from the cache offline.
      clientsClaim: true,
      skipWaiting: true,
      manifestTransforms: [
        (entries) => {
          const js = offlineJs(dist, entries.filter((e) => e.url.startsWith('assets/') && e.url.endsWith('.js')).map((e) => e.url.slice('assets/'.length)));
          const manifest = entries.filter((e) => !e.url.startsWith('assets/') || !e.url.endsWith('.js') || js.has(e.url.slice('assets/'.length)));
          return { manifest };
        },
      ],
    },
  };
}
