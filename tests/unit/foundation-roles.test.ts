// The role matrix of the foundation screens: for every route × role (and signed out), the
// status its loader and its action answer with. The expected table is the role model of the
// foundation issue: supervisors manage people, protocols and montages; operators prepare
// sessions (participants) and read montages and protocols; developers get API tokens and the
// outbox; participants see none of these screens.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { eq } from 'drizzle-orm'
import { montages, participants, protocols } from '~/db/schema'
import type { Role } from '~/server/services'
import * as participantsIndex from '~/routes/participants._index'
import * as participantsNew from '~/routes/participants.new'
import * as participantEdit from '~/routes/participants.$participantId'
import * as montagesIndex from '~/routes/montages._index'
import * as montagesNew from '~/routes/montages.new'
import * as montageDetail from '~/routes/montages.$montageId'
import * as protocolsIndex from '~/routes/protocols._index'
import * as protocolsNew from '~/routes/protocols.new'
import * as protocolDetail from '~/routes/protocols.$protocolId'
import * as peopleIndex from '~/routes/people._index'
import * as peopleInvite from '~/routes/people.invite'
import * as audit from '~/routes/audit'
import * as outbox from '~/routes/outbox'
import * as apiTokens from '~/routes/api-tokens'
import * as invite from '~/routes/invite.$token'
import * as reset from '~/routes/reset.$token'
import * as forgot from '~/routes/forgot-password'
import { call, cookieFor, createTestServices, request, type TestServices } from '../support/services'

type Who = Role | 'signed out'
const WHO: Who[] = ['supervisor', 'operator', 'developer', 'participant', 'signed out']

// 200: served; 302: sent to sign-in; 403: wrong role.
type Expect = Record<Who, 200 | 302 | 403>
const only = (...roles: Role[]): Expect =>
  Object.fromEntries(WHO.map((w) => [w, w === 'signed out' ? 302 : roles.includes(w as Role) ? 200 : 403])) as Expect
const everyone: Expect = { supervisor: 200, operator: 200, developer: 200, participant: 200, 'signed out': 200 }

interface RouteCase {
  path: string
  module: { loader?: (args: never) => unknown; action?: (args: never) => unknown }
  params?: () => Record<string, string>
  loader?: Expect
  action?: Expect
}

let t: TestServices
const ids = { participant: '', montage: '', protocol: '' }

beforeAll(async () => {
  t = await createTestServices()
  const db = t.handle.db
  ids.participant = (await db.select().from(participants).where(eq(participants.labId, t.labId)))[0].id
  ids.montage = (await db.select().from(montages).where(eq(montages.labId, t.labId)))[0].id
  ids.protocol = (await db.select().from(protocols).where(eq(protocols.labId, t.labId)))[0].id
})
afterAll(async () => t.close())

const ROUTES: RouteCase[] = [
  { path: '/participants', module: participantsIndex, loader: only('supervisor', 'operator') },
  { path: '/participants/new', module: participantsNew, loader: only('supervisor', 'operator'), action: only('supervisor', 'operator') },
  { path: '/participants/:id', module: participantEdit, params: () => ({ participantId: ids.participant }), loader: only('supervisor', 'operator'), action: only('supervisor', 'operator') },
  { path: '/montages', module: montagesIndex, loader: only('supervisor', 'operator') },
  { path: '/montages/new', module: montagesNew, loader: only('supervisor'), action: only('supervisor') },
  { path: '/montages/:id', module: montageDetail, params: () => ({ montageId: ids.montage }), loader: only('supervisor', 'operator'), action: only('supervisor') },
  { path: '/protocols', module: protocolsIndex, loader: only('supervisor', 'operator') },
  { path: '/protocols/new', module: protocolsNew, loader: only('supervisor'), action: only('supervisor') },
  { path: '/protocols/:id', module: protocolDetail, params: () => ({ protocolId: ids.protocol }), loader: only('supervisor', 'operator'), action: only('supervisor') },
  { path: '/people', module: peopleIndex, loader: only('supervisor'), action: only('supervisor') },
  { path: '/people/invite', module: peopleInvite, loader: only('supervisor'), action: only('supervisor') },
  { path: '/audit', module: audit, loader: only('supervisor') },
  { path: '/outbox', module: outbox, loader: only('supervisor', 'developer') },
  { path: '/api-tokens', module: apiTokens, loader: only('developer'), action: only('developer') },
  // Reached from e-mailed links, signed out: the token is the credential (an unknown one
  // shows the "link no longer works" page, status 200).
  { path: '/invite/:token', module: invite, params: () => ({ token: 'inv_unknown' }), loader: everyone, action: everyone },
  { path: '/reset/:token', module: reset, params: () => ({ token: 'rst_unknown' }), loader: everyone, action: everyone },
  { path: '/forgot-password', module: forgot, action: everyone },
]

const cookies = new Map<Who, string>()
async function cookie(who: Who): Promise<string | undefined> {
  if (who === 'signed out') return undefined
  if (!cookies.has(who)) cookies.set(who, await cookieFor(t, who))
  return cookies.get(who)
}

describe.each(ROUTES)('$path', (route) => {
  const kinds = (['loader', 'action'] as const).filter((k) => route[k])
  for (const kind of kinds) {
    it.each(WHO)(`${kind} answers %s as the role model says`, async (who) => {
      const path = route.path.replace(/:id|:token/, 'x')
      // An empty form: allowed roles get their inline errors back (200), nothing is written.
      const req = request(path, { cookie: await cookie(who), ...(kind === 'action' ? { form: { intent: 'nothing' } } : {}) })
      const fn = route.module[kind] as (args: never) => unknown
      const res = await call(fn, req, t.context, route.params?.() ?? {})
      const expected = route[kind]![who]
      expect(res.status, `${kind} ${route.path} as ${who}`).toBe(expected)
      if (expected === 302) expect(res.location).toMatch(/^\/sign-in\?redirectTo=/)
    })
  }
})

it('covers every route module this suite owns', () => {
  expect(ROUTES.length).toBe(17)
})
