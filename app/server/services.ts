// The long-lived services that server.ts creates once and hands to every loader and action
// through React Router's load context. Route modules never open their own database or
// sockets: the built app bundle and server.ts must share one PGlite instance.
import type { Database } from '~/db/client.server'
import type { Config } from '~/server/config.server'
import type { LiveServicesImpl } from '~/live/index.server'

export type Role = 'supervisor' | 'operator' | 'participant' | 'developer'

/** What a signed-in request knows about its user. */
export interface SessionUser {
  id: string
  labId: string
  role: Role
  email: string
  name: string
  /** Only for the participant role. */
  participantId: string | null
}

export interface Mailer {
  send(message: { to: string; subject: string; text: string; html?: string; labId?: string | null }): Promise<void>
}

/** Live-session services (ingest, decoding, SSE, runs, training). Implemented in app/live/index.server.ts. */
export type LiveServices = LiveServicesImpl

export interface Services {
  config: Config
  db: Database
  dbKind: 'pglite' | 'postgres'
  mail: Mailer
  live: LiveServices
}

declare module 'react-router' {
  interface AppLoadContext {
    services: Services
    /** Per-request nonce for the Content-Security-Policy script-src. */
    cspNonce: string
  }
}
