import { Form, NavLink, useMatches } from 'react-router'
import type { Role, SessionUser } from '~/server/services'

/** A route module can export `handle = { bare: true }` to render without the shell
 *  (the participant's feedback view, print layouts). */
export interface RouteHandle {
  bare?: boolean
  paper?: boolean
}

interface NavItem {
  to: string
  label: string
}

export const NAV: Record<Role, NavItem[]> = {
  supervisor: [
    { to: '/home', label: 'Home' },
    { to: '/review', label: 'Review' },
    { to: '/sessions', label: 'Sessions' },
    { to: '/participants', label: 'Participants' },
    { to: '/montages', label: 'Montages' },
    { to: '/protocols', label: 'Protocols' },
    { to: '/people', label: 'People' },
    { to: '/audit', label: 'Audit log' },
    { to: '/outbox', label: 'Outbox' },
  ],
  operator: [
    { to: '/home', label: 'Home' },
    { to: '/sessions', label: 'Sessions' },
    { to: '/participants', label: 'Participants' },
    { to: '/montages', label: 'Montages' },
    { to: '/protocols', label: 'Protocols' },
  ],
  developer: [
    { to: '/home', label: 'Home' },
    { to: '/bench', label: 'Bench' },
    { to: '/sessions', label: 'Sessions' },
    { to: '/api-tokens', label: 'API tokens' },
    { to: '/outbox', label: 'Outbox' },
  ],
  participant: [{ to: '/me', label: 'My progress' }],
}

export const ROLE_LABEL: Record<Role, string> = {
  supervisor: 'Supervisor',
  operator: 'Operator',
  participant: 'Participant',
  developer: 'Developer',
}

export function TillerMark({ className = 'h-7 w-7' }: { className?: string }) {
  // Our own glyph: a steering arm over a wave line.
  return (
    <svg viewBox="0 0 32 32" className={className} aria-hidden="true">
      <path d="M4 22c4-3 8 3 12 0s8 3 12 0" fill="none" stroke="currentColor" strokeWidth="2.5" strokeLinecap="round" />
      <path d="M9 17 L23 7" stroke="currentColor" strokeWidth="3" strokeLinecap="round" />
      <circle cx="23" cy="7" r="2.6" fill="currentColor" />
    </svg>
  )
}

export function CautionFooter({ tone = 'ink' }: { tone?: 'ink' | 'paper' }) {
  const cls = tone === 'paper' ? 'text-navy/80' : 'text-haze'
  return (
    <footer className={`px-6 py-4 text-xs ${cls}`}>
      Tiller is not a medical device and gives no diagnosis. Use it only under an approved protocol with licensed supervision.{' '}
      <a href="/cautions" className="underline">
        Cautions
      </a>
    </footer>
  )
}

export function AppShell({ user, children }: { user: SessionUser | null; children: React.ReactNode }) {
  const matches = useMatches()
  const handle = matches.reduce<RouteHandle>((acc, m) => ({ ...acc, ...((m.handle as RouteHandle) ?? {}) }), {})
  if (handle.bare) return <>{children}</>
  if (!user || handle.paper) {
    return (
      <div className="flex min-h-screen flex-col bg-paper text-navy">
        <header className="flex flex-wrap items-center gap-2 px-6 py-4 text-navy">
          <TillerMark />
          <a href="/" className="text-xl font-bold tracking-tight">
            Tiller
          </a>
          {user ? (
            <>
              <nav aria-label="Main" className="ml-8 flex gap-4">
                {NAV[user.role].map((item) => (
                  <NavLink key={item.to} to={item.to} className={({ isActive }) => `text-base ${isActive ? 'font-bold underline' : 'hover:underline'}`}>
                    {item.label}
                  </NavLink>
                ))}
              </nav>
              <Form method="post" action="/sign-out" className="ml-auto">
                <span className="mr-3">{user.name}</span>
                <button type="submit" className="underline">
                  Sign out
                </button>
              </Form>
            </>
          ) : null}
        </header>
        <main className="flex-1 px-6">{children}</main>
        <CautionFooter tone="paper" />
      </div>
    )
  }
  return (
    <div className="flex min-h-screen">
      <a href="#main" className="sr-only focus:not-sr-only focus:absolute focus:left-2 focus:top-2 focus:bg-brass focus:p-2 focus:text-ink-950">
        Skip to content
      </a>
      <aside className="flex w-56 shrink-0 flex-col border-r border-ink-800 bg-ink-900">
        <div className="flex items-center gap-2 px-5 py-5 text-brass">
          <TillerMark />
          <span className="text-xl font-bold tracking-tight text-fog">Tiller</span>
        </div>
        <nav aria-label="Main" className="flex flex-1 flex-col gap-1 px-3">
          {NAV[user.role].map((item) => (
            <NavLink
              key={item.to}
              to={item.to}
              className={({ isActive }) =>
                `rounded-md px-3 py-2 text-sm ${isActive ? 'bg-ink-700 font-medium text-fog' : 'text-haze hover:bg-ink-800 hover:text-fog'}`
              }
            >
              {item.label}
            </NavLink>
          ))}
        </nav>
        <div className="border-t border-ink-800 px-5 py-4 text-sm">
          <div className="font-medium">{user.name}</div>
          <div className="text-haze">{ROLE_LABEL[user.role]}</div>
          <Form method="post" action="/sign-out" className="mt-3">
            <button type="submit" className="text-haze underline hover:text-fog">
              Sign out
            </button>
          </Form>
        </div>
      </aside>
      <div className="flex min-w-0 flex-1 flex-col">
        <main id="main" className="flex-1 p-8">
          {children}
        </main>
        <CautionFooter />
      </div>
    </div>
  )
}
