// The production server as a browser meets it: server.ts started on loopback with the built
// app (NODE_ENV=production, PUBLIC_URL on https), the demo lab seeded by `tiller demo`.
// Checks: security headers on every kind of response and a CSP nonce that matches every
// script; cross-site POSTs refused for every route that has an action (read from app/routes at
// test time); the Secure cookie flag; no stack traces, file paths or secrets in error pages.
// Sources: OWASP CSRF Prevention and Error Handling Cheat Sheets; CSP Level 3 (W3C).
import { readdirSync, readFileSync } from 'node:fs'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEMO_ACCOUNTS } from '~/server/demo.server'
import { ROOT, signInOver, startServer, type ServerProcess } from '../support/server-process'

const PORT = 4610
const SECRET = 'production-test-secret-do-not-leak-0123456789'
let server: ServerProcess
let operatorCookie: string

beforeAll(async () => {
  server = await startServer({
    port: PORT,
    dataDir: 'tmp/sec-data',
    fresh: true,
    seedDemo: true,
    production: true,
    env: { PUBLIC_URL: 'https://tiller.lab.example', SESSION_SECRET: SECRET },
  })
  const op = DEMO_ACCOUNTS.find((a) => a.role === 'operator')!
  operatorCookie = await signInOver(server.url, op.email, op.password)
}, 180_000)

afterAll(async () => {
  await server?.stop()
})

const get = (path: string, headers: Record<string, string> = {}) => fetch(`${server.url}${path}`, { redirect: 'manual', headers })

/** Route files that export an action: every one is a state-changing endpoint. */
function routesWithActions(): string[] {
  const dir = join(ROOT, 'app/routes')
  return readdirSync(dir).filter((f) => /export (async )?function action\b|export const action\b/.test(readFileSync(join(dir, f), 'utf8')))
}

/** A URL path for a flat-routes file name, with a fresh uuid for every dynamic segment. */
function pathFor(file: string): string {
  const name = file.replace(/\.(tsx?|jsx?)$/, '')
  const segments = name
    .split('.')
    .filter((s) => s !== '_index' && !s.startsWith('_'))
    .map((s) => (s.startsWith('$') ? crypto.randomUUID() : s.replace(/\[(.*?)\]/g, '$1').replace(/_$/, '')))
  return '/' + segments.join('/')
}

function expectSecurityHeaders(res: Response) {
  const csp = res.headers.get('content-security-policy') ?? ''
  expect(csp).toMatch(/frame-ancestors 'none'/)
  expect(csp).toMatch(/script-src 'self' 'nonce-[A-Za-z0-9+/=]{16,}'/)
  expect(csp).not.toMatch(/script-src[^;]*'unsafe-inline'/)
  expect(res.headers.get('x-content-type-options')).toBe('nosniff')
  expect(res.headers.get('x-frame-options')).toBe('DENY')
  expect(res.headers.get('referrer-policy')).toBe('same-origin')
  expect(res.headers.get('x-powered-by')).toBeNull()
}

function expectNoLeaks(body: string) {
  expect(body).not.toMatch(/\n\s+at [\w.<>]+ \(|at file:\/\/|node:internal/) // stack frames
  expect(body).not.toContain(ROOT) // server file paths
  expect(body).not.toContain('node_modules')
  expect(body).not.toContain(SECRET)
  expect(body).not.toMatch(/TypeError|ReferenceError|SyntaxError/)
}

describe('security headers in production', () => {
  it('pages carry the CSP with a fresh nonce, and every script in the page carries that nonce', async () => {
    const a = await get('/sign-in')
    const b = await get('/sign-in')
    expect(a.status).toBe(200)
    expectSecurityHeaders(a)
    const nonceOf = (r: Response) => /'nonce-([^']+)'/.exec(r.headers.get('content-security-policy') ?? '')?.[1]
    const nonce = nonceOf(a)!
    expect(nonce).not.toBe(nonceOf(b))
    const html = await a.text()
    const scripts = [...html.matchAll(/<script\b[^>]*>/g)].map((m) => m[0])
    expect(scripts.length).toBeGreaterThan(0)
    for (const tag of scripts) {
      // External module scripts are allowed by 'self'; inline ones must carry the nonce.
      if (/\bsrc=/.test(tag)) continue
      expect(tag, tag).toContain(`nonce="${nonce}"`)
    }
    await b.text()
  })

  it('signed-in pages, the health check, static files, 404s and refusals carry them too', async () => {
    for (const res of [
      await get('/home', { Cookie: operatorCookie }),
      await get('/healthz'),
      await get('/favicon.ico'),
      await get('/no-such-page-here'),
      await fetch(`${server.url}/sign-in`, { method: 'POST', headers: { Origin: 'https://evil.example' }, body: 'x=1' }),
    ]) {
      expectSecurityHeaders(res)
      await res.arrayBuffer()
    }
  })
})

describe('cross-site requests against the running server', () => {
  it('a sign-in form posted from another site is refused before it is read', async () => {
    const op = DEMO_ACCOUNTS.find((a) => a.role === 'operator')!
    const res = await fetch(`${server.url}/sign-in`, {
      method: 'POST',
      redirect: 'manual',
      headers: { Origin: 'https://evil.example', 'Content-Type': 'application/x-www-form-urlencoded' },
      body: new URLSearchParams({ email: op.email, password: op.password }),
    })
    expect(res.status).toBe(403)
    expect(res.headers.get('set-cookie')).toBeNull()
    expect(await res.text()).toMatch(/another site/)
  })

  it('the same form from the same origin signs in, with a Secure, HttpOnly, SameSite=Lax cookie', async () => {
    const dev = DEMO_ACCOUNTS.find((a) => a.role === 'developer')!
    const res = await fetch(`${server.url}/sign-in`, {
      method: 'POST',
      redirect: 'manual',
      headers: { Origin: server.url, 'Sec-Fetch-Site': 'same-origin', 'Content-Type': 'application/x-www-form-urlencoded' },
      body: new URLSearchParams({ email: dev.email, password: dev.password }),
    })
    expect(res.status).toBe(302)
    const cookie = res.headers.get('set-cookie') ?? ''
    expect(cookie).toMatch(/; Secure/)
    expect(cookie).toMatch(/; HttpOnly/)
    expect(cookie).toMatch(/; SameSite=Lax/)
  })

  it('every route with an action refuses a signed-in cross-site POST (403), and allows nothing through', async () => {
    const files = routesWithActions()
    expect(files.length).toBeGreaterThan(2)
    for (const file of files) {
      const path = pathFor(file)
      const variants: Record<string, string>[] = [{ Origin: 'https://evil.example' }, { 'Sec-Fetch-Site': 'cross-site' }, { Origin: 'null' }]
      for (const headers of variants) {
        const res = await fetch(`${server.url}${path}`, {
          method: 'POST',
          redirect: 'manual',
          headers: { ...headers, Cookie: operatorCookie, 'Content-Type': 'application/x-www-form-urlencoded' },
          body: 'intent=anything',
        })
        expect(res.status, `${file} -> ${path} ${JSON.stringify(headers)}`).toBe(403)
        await res.text()
      }
    }
  })

  it('a same-origin state change still works (sign-out)', async () => {
    const sup = DEMO_ACCOUNTS.find((a) => a.role === 'supervisor')!
    const cookie = await signInOver(server.url, sup.email, sup.password)
    const res = await fetch(`${server.url}/sign-out`, { method: 'POST', redirect: 'manual', headers: { Origin: server.url, Cookie: cookie } })
    expect(res.status).toBe(302)
    expect(res.headers.get('location')).toBe('/sign-in')
  })
})

describe('error pages in production', () => {
  it('a missing page is a plain 404', async () => {
    const res = await get('/no/such/page', { Cookie: operatorCookie })
    expect(res.status).toBe(404)
    expectNoLeaks(await res.text())
  })

  it('a malformed multipart body (the action throws inside formData) answers without a stack trace', async () => {
    for (const path of ['/sign-in', '/participants/new', '/sessions/new']) {
      const res = await fetch(`${server.url}${path}`, {
        method: 'POST',
        redirect: 'manual',
        headers: { Origin: server.url, Cookie: operatorCookie, 'Content-Type': 'multipart/form-data; boundary=----nope' },
        body: '------broken\r\nContent-Disposition: form-data; name="x"\r\n\r\nunterminated',
      })
      // /sign-in with a signed-in cookie redirects home after the action; the others refuse the body.
      expect(res.status, path).toBeLessThan(600)
      expectNoLeaks(await res.text())
    }
  })

  it('data requests (.data, as client navigation sends them) for errors leak nothing either', async () => {
    for (const path of ['/participants/not-a-uuid.data', '/sessions/00000000-0000-0000-0000-000000000000.data', '/home.data']) {
      const res = await get(path, { Cookie: operatorCookie })
      expect(res.status, path).toBeLessThan(600)
      expectNoLeaks(await res.text())
    }
  })

  it('a badly encoded URL and a huge query string are answered, not crashed on', async () => {
    for (const path of ['/participants/%E0%A4%A', '/sign-in?redirectTo=' + 'a'.repeat(6000), '/%00', '/sessions/..%2f..%2fetc%2fpasswd']) {
      const res = await get(path, { Cookie: operatorCookie })
      expect(res.status, path).toBeLessThan(600)
      expectNoLeaks(await res.text())
    }
    expect((await get('/healthz')).status).toBe(200)
  })

  it('the server log is structured JSON and holds no secret either', () => {
    const lines = server.output().split('\n').filter((l) => l.startsWith('{'))
    expect(lines.length).toBeGreaterThan(0)
    for (const line of lines) expect(() => JSON.parse(line)).not.toThrow()
    expect(server.output()).not.toContain(SECRET)
  })
})

// Last in this file: it throttles 127.0.0.1 on this server for the rest of the window.
describe('the client address the throttle sees', () => {
  it('cannot be chosen by the client (a forged x-tiller-client-ip is replaced by the socket address)', async () => {
    const attempt = (i: number) =>
      fetch(`${server.url}/sign-in`, {
        method: 'POST',
        redirect: 'manual',
        headers: { Origin: server.url, 'Content-Type': 'application/x-www-form-urlencoded', 'X-Tiller-Client-IP': `203.0.113.${i}` },
        body: new URLSearchParams({ email: `nobody${i}@elsewhere.example`, password: 'guess' }),
      }).then((r) => r.text())
    for (let i = 0; i < 5; i++) expect(await attempt(i)).toMatch(/do not match/)
    // Six addresses claimed, one real one: the sixth attempt is throttled.
    expect(await attempt(99)).toMatch(/Too many failed attempts/)
  })
})
