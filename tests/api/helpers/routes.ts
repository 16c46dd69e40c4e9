import type { Express } from 'express'

/** A route of the app as Express holds it: method and full path with its parameters (`/api/limits/:id`). */
export interface AppRoute {
  method: 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE'
  path: string
  key: string
}

interface Layer {
  route?: { path: string; methods: Record<string, boolean> }
  handle?: { stack?: Layer[] }
  rawPath?: string | RegExp
}

/**
 * Every route of the app, read from Express's router stack (routers mounted with `use(path, router)` included), so a
 * route added to any router shows up here without a list kept by hand.
 */
export function appRoutes(app: Express): AppRoute[] {
  const out: AppRoute[] = []
  const walk = (stack: Layer[], prefix: string) => {
    for (const layer of stack) {
      if (layer.route) {
        const path = `${prefix}${layer.route.path}`.replace(/(.)\/$/, '$1')
        for (const m of Object.keys(layer.route.methods)) {
          const method = m.toUpperCase() as AppRoute['method']
          out.push({ method, path, key: `${method} ${path}` })
        }
      } else if (layer.handle?.stack) {
        const mount = typeof layer.rawPath === 'string' && layer.rawPath !== '/' ? layer.rawPath : ''
        walk(layer.handle.stack, prefix + mount)
      }
    }
  }
  walk((app as unknown as { router: { stack: Layer[] } }).router.stack, '')
  return out
}

/** The routes that change state (everything but GET). */
export function mutatingRoutes(app: Express): AppRoute[] {
  return appRoutes(app).filter((r) => r.method !== 'GET')
}
