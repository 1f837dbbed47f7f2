// Response headers and the cross-site write check applied by server.ts to every request.
// CSRF: browsers send Origin (and Sec-Fetch-Site) on every POST; a state-changing request
// whose origin is another site is refused before it reaches any action. Together with
// SameSite=Lax session cookies this is the OWASP "verify origin with standard headers"
// defence, applied in one place instead of per form (docs/decisions/002-csrf.md).
import type { IncomingMessage } from 'node:http'
import type { Config } from '~/server/config.server'

const SAFE_METHODS = new Set(['GET', 'HEAD', 'OPTIONS'])

/**
 * Sets a request header that only the server may set (the client address, the CSP nonce),
 * dropping any copy the client sent. React Router's Node adapter builds the Fetch Request from
 * `req.rawHeaders`, so both `rawHeaders` and `headers` are rewritten; setting `req.headers`
 * alone would let a client-sent header through and lose ours.
 */
export function setTrustedHeader(req: IncomingMessage, name: string, value: string): void {
  const lower = name.toLowerCase()
  const raw: string[] = []
  for (let i = 0; i + 1 < req.rawHeaders.length; i += 2) if (req.rawHeaders[i].toLowerCase() !== lower) raw.push(req.rawHeaders[i], req.rawHeaders[i + 1])
  raw.push(lower, value)
  req.rawHeaders.length = 0
  req.rawHeaders.push(...raw)
  req.headers[lower] = value
}

export function isCrossSiteWrite(req: IncomingMessage, config: Pick<Config, 'publicUrl'>): boolean {
  if (SAFE_METHODS.has(req.method ?? 'GET')) return false
  const fetchSite = req.headers['sec-fetch-site']
  if (typeof fetchSite === 'string' && fetchSite !== 'same-origin' && fetchSite !== 'none') return true
  const origin = req.headers.origin
  if (!origin) return false // not a browser form: no ambient credentials to abuse
  if (origin === 'null') return true
  const host = req.headers.host
  const allowed = new Set([new URL(config.publicUrl).origin])
  if (host) {
    allowed.add(`http://${host}`)
    allowed.add(`https://${host}`)
  }
  return !allowed.has(origin)
}

export function securityHeaders({ production, nonce }: { production: boolean; nonce: string }): Record<string, string> {
  const scriptSrc = production ? `'self' 'nonce-${nonce}'` : `'self' 'unsafe-inline'`
  const csp = [
    `default-src 'self'`,
    `script-src ${scriptSrc}`,
    `style-src 'self' 'unsafe-inline'`,
    `img-src 'self' data: blob:`,
    `font-src 'self'`,
    `connect-src 'self' ws: wss:`,
    `object-src 'none'`,
    `base-uri 'self'`,
    `form-action 'self'`,
    `frame-ancestors 'none'`,
  ].join('; ')
  return {
    'Content-Security-Policy': csp,
    'X-Content-Type-Options': 'nosniff',
    'X-Frame-Options': 'DENY',
    'Referrer-Policy': 'same-origin',
    'Cross-Origin-Opener-Policy': 'same-origin',
    'Permissions-Policy': 'camera=(), microphone=(), geolocation=()',
  }
}
