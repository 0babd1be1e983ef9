/**
 * Registers the service worker (dist/sw.js, generated at build time by vite-plugin-pwa) once the
 * shell has shown. It takes over at once (skipWaiting, clientsClaim in build/pwa.ts), so no
 * update prompt is needed; a new version serves from the next load.
 */
let done = false;
export function registerServiceWorker(): void {
  if (done || !('serviceWorker' in navigator) || import.meta.env.DEV) return;
  done = true;
  // A refused registration (a private window, a browser policy) leaves the app online-only.
  navigator.serviceWorker.register('/sw.js', { scope: '/' }).catch(() => undefined);
}
