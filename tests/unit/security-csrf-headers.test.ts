// The cross-site write refusal and the response headers, at the function level
// (app/server/http-security.server.ts, which server.ts applies to every request).
// Sources: OWASP CSRF Prevention Cheat Sheet, "Verifying origin with standard headers" and
// "Fetch Metadata" (Sec-Fetch-Site values same-origin / same-site / cross-site / none, from
// the W3C Fetch Metadata Request Headers draft); CSP Level 3 (W3C) for nonce-source and
// frame-ancestors; the MIME Sniffing standard (WHATWG) for X-Content-Type-Options: nosniff.
import type { IncomingMessage } from 'node:http'
import { describe, expect, it } from 'vitest'
import { isCrossSiteWrite, securityHeaders } from '~/server/http-security.server'

const config = { publicUrl: 'https://tiller.lab.example' }

function req(method: string, headers: Record<string, string>): IncomingMessage {
  return { method, headers: Object.fromEntries(Object.entries(headers).map(([k, v]) => [k.toLowerCase(), v])) } as unknown as IncomingMessage
}

describe('isCrossSiteWrite', () => {
  // [what, method, headers, refused]
  const cases: [string, string, Record<string, string>, boolean][] = [
    ['same-origin POST (Origin = public URL)', 'POST', { Origin: 'https://tiller.lab.example', Host: 'tiller.lab.example' }, false],
    ['same-origin POST on the Host the browser used (loopback install)', 'POST', { Origin: 'http://127.0.0.1:4600', Host: '127.0.0.1:4600' }, false],
    ['POST from another site', 'POST', { Origin: 'https://evil.example', Host: 'tiller.lab.example' }, true],
    ['POST from a look-alike host (suffix trick)', 'POST', { Origin: 'https://tiller.lab.example.evil.example', Host: 'tiller.lab.example' }, true],
    ['POST from another port of the same host', 'POST', { Origin: 'http://127.0.0.1:4601', Host: '127.0.0.1:4600' }, true],
    ['POST from an opaque origin (sandboxed frame, data: URL)', 'POST', { Origin: 'null', Host: 'tiller.lab.example' }, true],
    ['Sec-Fetch-Site cross-site even without Origin', 'POST', { 'Sec-Fetch-Site': 'cross-site', Host: 'tiller.lab.example' }, true],
    ['Sec-Fetch-Site same-site (a sibling subdomain is not this origin)', 'POST', { 'Sec-Fetch-Site': 'same-site', Origin: 'https://tiller.lab.example', Host: 'tiller.lab.example' }, true],
    ['Sec-Fetch-Site same-origin', 'POST', { 'Sec-Fetch-Site': 'same-origin', Origin: 'https://tiller.lab.example', Host: 'tiller.lab.example' }, false],
    ['Sec-Fetch-Site none (typed in the address bar)', 'POST', { 'Sec-Fetch-Site': 'none', Host: 'tiller.lab.example' }, false],
    ['PUT from another site', 'PUT', { Origin: 'https://evil.example' }, true],
    ['PATCH from another site', 'PATCH', { Origin: 'https://evil.example' }, true],
    ['DELETE from another site', 'DELETE', { Origin: 'https://evil.example' }, true],
    ['GET from another site (links are fine; GET changes nothing)', 'GET', { Origin: 'https://evil.example', 'Sec-Fetch-Site': 'cross-site' }, false],
    ['HEAD from another site', 'HEAD', { 'Sec-Fetch-Site': 'cross-site' }, false],
    // Not a browser: no ambient cookies are attached by a script or a bridge, and the API uses bearer tokens.
    ['POST without Origin or Sec-Fetch-Site (curl, the CLI)', 'POST', {}, false],
  ]
  for (const [what, method, headers, refused] of cases) {
    it(`${refused ? 'refuses' : 'allows'} ${what}`, () => {
      expect(isCrossSiteWrite(req(method, headers), config)).toBe(refused)
    })
  }
})

describe('securityHeaders', () => {
  const prod = securityHeaders({ production: true, nonce: 'abc123' })
  const dev = securityHeaders({ production: false, nonce: 'abc123' })
  const directives = (csp: string) => new Map(csp.split(';').map((d) => d.trim().split(/\s+/)).map(([name, ...values]) => [name, values]))

  it('production: scripts only from self and the per-request nonce, never inline', () => {
    const csp = directives(prod['Content-Security-Policy'])
    expect(csp.get('script-src')).toEqual(["'self'", "'nonce-abc123'"])
    expect(prod['Content-Security-Policy']).not.toContain('unsafe-eval')
    expect(csp.get('script-src')).not.toContain("'unsafe-inline'")
  })

  it('both modes: no framing, no plugins, no foreign form targets or base URLs', () => {
    for (const headers of [prod, dev]) {
      const csp = directives(headers['Content-Security-Policy'])
      expect(csp.get('frame-ancestors')).toEqual(["'none'"])
      expect(csp.get('object-src')).toEqual(["'none'"])
      expect(csp.get('form-action')).toEqual(["'self'"])
      expect(csp.get('base-uri')).toEqual(["'self'"])
      expect(csp.get('default-src')).toEqual(["'self'"])
      expect(headers['X-Content-Type-Options']).toBe('nosniff')
      expect(headers['X-Frame-Options']).toBe('DENY')
      expect(['same-origin', 'no-referrer', 'strict-origin-when-cross-origin']).toContain(headers['Referrer-Policy'])
    }
  })

  it('development allows inline scripts (Vite injects its client); production does not', () => {
    expect(directives(dev['Content-Security-Policy']).get('script-src')).toContain("'unsafe-inline'")
  })
})
