/**
 * The route table of the app, read from the app itself: walks Express 5's router stack (router 2.x),
 * joining the path each router is mounted at (`layer.rawPath`, the path given to `use`) with the
 * route paths below it. A route added anywhere is found without editing the fuzz.
 */
import type { Express } from 'express';

export interface RouteInfo {
  method: 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE';
  /** Full path pattern, e.g. /api/studies/:id/photos. */
  path: string;
}

interface Layer {
  name: string;
  rawPath?: unknown;
  slash?: boolean;
  handle: { stack?: Layer[] };
  route?: { path: unknown; methods: Record<string, boolean> };
}

const METHODS = new Set(['GET', 'POST', 'PUT', 'PATCH', 'DELETE']);

function join(prefix: string, path: string): string {
  const p = `${prefix}/${path}`.replace(/\/+/g, '/');
  return p.length > 1 ? p.replace(/\/$/, '') : p;
}

/** The mount path of a router layer: '/' for `use(router)`, '/api' for `use('/api', router)`. */
function mountPath(layer: Layer): string {
  if (layer.slash) return '';
  if (typeof layer.rawPath === 'string') return layer.rawPath;
  throw new Error(`route discovery: a router layer without a string path (${String(layer.rawPath)}); the router package changed, update tests/fuzz/routes.ts`);
}

export function listRoutes(app: Express): RouteInfo[] {
  const root = (app as unknown as { router?: { stack: Layer[] } }).router;
  if (!root?.stack) throw new Error('route discovery: app.router.stack is missing (not Express 5?)');
  const out: RouteInfo[] = [];
  const walk = (stack: Layer[], prefix: string) => {
    for (const layer of stack) {
      if (layer.route) {
        const paths = Array.isArray(layer.route.path) ? layer.route.path : [layer.route.path];
        for (const p of paths) {
          if (typeof p !== 'string') continue;
          for (const [m, on] of Object.entries(layer.route.methods)) {
            const method = m.toUpperCase();
            if (on && METHODS.has(method)) out.push({ method: method as RouteInfo['method'], path: join(prefix, p) });
          }
        }
      } else if (layer.handle?.stack) {
        walk(layer.handle.stack, join(prefix, mountPath(layer)));
      }
    }
  };
  walk(root.stack, '');
  const seen = new Set<string>();
  return out.filter((r) => {
    const key = `${r.method} ${r.path}`;
    if (seen.has(key)) return false;
    seen.add(key);
    return true;
  });
}
