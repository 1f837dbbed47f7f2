// Who may reach what: the specification tests/unit/access-matrix.test.ts checks against every
// route file in app/routes. Adding a route? Add its row here, or the matrix test fails and
// names the file. Roles follow the product brief: operators run sessions, supervisors review,
// sign off and manage the lab's people, montages and protocols, developers script and drive
// the bench, participants see their own progress and their feedback view, nothing else.
//
// Derived by the test for every row:
// - signed out: `signedOut` (default 'sign-in', a redirect to /sign-in; resource routes that
//   also take a bearer token answer 'unauthorized' 401);
// - each role of the lab: 'ok' if listed in `allow`, else 'forbidden' (403);
// - a user of another lab with an allowed role: 'not-found' (404) when the URL names an object
//   (a $participantId, $sessionId, … of the first lab), else 'ok' with none of the first lab's
//   ids or codes in the answer;
// - for object URLs, an allowed role with a random uuid or a malformed id: 'not-found';
// - a participant allowed on a session URL, with another participant's session: 'not-found'.
import { DEFAULT_PROTOCOL } from '~/components/protocol-form'
import type { Role } from '~/server/services'

export type Outcome = 'ok' | 'sign-in' | 'unauthorized' | 'forbidden' | 'not-found'

export interface Access {
  /** Roles of the lab that get through, or 'anyone' (public: every visitor gets 'ok'). */
  allow: readonly Role[] | 'anyone'
  /** What a signed-out visitor gets; default 'sign-in' ('anyone' routes: `allowedGets`). */
  signedOut?: Outcome
  /** What an allowed caller gets; default 'ok'. */
  allowedGets?: Outcome
  /**
   * Fields sent with the action. Edit forms send valid values, so that the lab check, not the
   * form check, decides what another lab gets.
   */
  form?: Record<string, string | string[]>
  /** Query string added to the URL (without '?'). */
  query?: string
  /** Roles whose bearer API token works (others' tokens: 'forbidden'; an unknown token: 'unauthorized'). */
  bearer?: readonly Role[]
}

export interface RouteAccess {
  /** Values for URL params that are not plain object ids: '{decoderId}.json' (an object), 'decisions.csv' (a name). */
  params?: Record<string, string>
  loader?: Access
  /** One entry per form intent where roles differ by intent. */
  action?: Access | Access[]
  note?: string
}

const STAFF = ['supervisor', 'operator', 'developer'] as const
const LAB_EDITORS = ['supervisor', 'operator'] as const
const SUPERVISOR = ['supervisor'] as const
/** The live console stream and annotations (app/live/route-helpers.server.ts LIVE_WATCH_ROLES). */
const LIVE_WATCH = { allow: STAFF, signedOut: 'unauthorized', bearer: ['developer'] } as const
/** Runs, device tokens, feedback link, training, decoder choice (LIVE_CONTROL_ROLES). */
const LIVE_CONTROL = { allow: ['operator', 'developer'], signedOut: 'unauthorized', bearer: ['developer'] } as const
const PUBLIC = { allow: 'anyone' } as const
/** /api/v1 (app/server/api.server.ts requireApiCaller): a developer's token, or a staff cookie for GETs. */
const API = { allow: STAFF, signedOut: 'unauthorized', bearer: ['developer'] } as const

export const ACCESS_TABLE: Record<string, RouteAccess> = {
  '_index.tsx': { loader: { allow: 'anyone', signedOut: 'sign-in' }, note: 'redirects to the role home or to sign-in' },
  'api-tokens.tsx': { loader: { allow: ['developer'] }, action: { allow: ['developer'] } },
  'api.v1.sessions.ts': { loader: API },
  'api.v1.sessions.$sessionId.ts': { loader: API },
  'api.v1.decoders.ts': { loader: API },
  'api.v1.decoders.$decoderId.ts': { loader: API },
  'api.v1.runs.$runId.ts': { loader: API },
  'api.v1.runs.$runId_.decisions.ts': { loader: API },
  'api.v1.runs.$runId_.decisions[.]ndjson.ts': { loader: API },
  'api.v1.runs.$runId_.recording.ts': { loader: API },
  'bench.tsx': { loader: { allow: ['developer'] }, action: { allow: ['developer'] } },
  'exports.decoders.$file.ts': { params: { file: '{decoderId}.json' }, loader: { allow: STAFF } },
  'exports.runs.$runId.$file.ts': { params: { file: 'decisions.csv' }, loader: { allow: STAFF } },
  'exports.sessions.$sessionId.$file.ts': { params: { file: 'decisions.csv' }, loader: { allow: STAFF } },
  'review.decoders.$decoderId.tsx': { loader: { allow: STAFF } },
  'review.participants.$participantId.tsx': { loader: { allow: ['participant', ...STAFF] }, note: "a participant sees their own progress only (another participant's id: 404)" },
  'review.sessions.$sessionId_.report.tsx': { loader: { allow: STAFF } },
  'uploads._index.tsx': { loader: { allow: LAB_EDITORS } },
  'uploads.import.ts': { loader: PUBLIC, action: { allow: LAB_EDITORS, signedOut: 'unauthorized' }, note: 'GET only redirects to /uploads' },
  'audit.tsx': { loader: { allow: SUPERVISOR } },
  'cautions.tsx': { note: 'static page, no loader or action' },
  'forgot-password.tsx': { action: PUBLIC },
  'feedback.$sessionId.tsx': { loader: { allow: ['participant', ...STAFF] }, note: 'the feedback view page; also opened with the feedback link token (?token=)' },
  'healthz.ts': { loader: PUBLIC },
  'home.tsx': { loader: { allow: STAFF } },
  'invite.$token.tsx': { loader: PUBLIC, action: PUBLIC, note: 'the token in the URL is the credential' },
  'reset.$token.tsx': { loader: PUBLIC, action: PUBLIC, note: 'the token in the URL is the credential' },
  'live.$sessionId.annotations.ts': { action: LIVE_WATCH },
  'live.$sessionId.decoder.ts': { action: LIVE_CONTROL },
  'live.$sessionId.device-tokens.ts': { loader: LIVE_CONTROL, action: LIVE_CONTROL },
  'live.$sessionId.feedback-link.ts': { action: LIVE_CONTROL },
  'live.$sessionId.feedback.ts': {
    loader: { allow: ['participant', ...STAFF], signedOut: 'unauthorized', bearer: ['developer'] },
    note: 'also opened with the feedback link token (?token=), checked separately',
  },
  'live.$sessionId.operator.ts': { loader: LIVE_WATCH },
  'live.$sessionId.runs.ts': { loader: LIVE_WATCH, action: LIVE_CONTROL },
  'live.$sessionId.training.ts': {
    loader: { ...LIVE_CONTROL, query: `jobId=${'0'.repeat(8)}-0000-4000-8000-${'0'.repeat(12)}`, allowedGets: 'not-found' },
    action: LIVE_CONTROL,
    note: 'GET needs a job id; an unknown one is 404 for allowed callers, so only the role refusals are told apart here',
  },
  'me.tsx': { loader: { allow: ['participant'] } },
  'montages.$montageId.tsx': { loader: { allow: LAB_EDITORS }, action: { allow: SUPERVISOR, form: { name: 'Access test montage', reference: 'FCz', ground: 'AFz' } } },
  'montages._index.tsx': { loader: { allow: LAB_EDITORS } },
  'montages.new.tsx': { loader: { allow: SUPERVISOR }, action: { allow: SUPERVISOR } },
  'outbox.tsx': { loader: { allow: ['supervisor', 'developer'] } },
  'participants.$participantId.tsx': {
    loader: { allow: LAB_EDITORS },
    // The demo participant's own values (app/server/demo.server.ts), so an allowed edit changes nothing.
    action: { allow: LAB_EDITORS, form: { code: 'HS-014', yearOfBirth: '1991', handedness: 'right', consentStatus: 'given', consentDate: '2026-10-02', notes: 'Prefers sessions in the morning. Glasses off during runs.' } },
  },
  'participants._index.tsx': { loader: { allow: LAB_EDITORS } },
  'participants.new.tsx': { loader: { allow: LAB_EDITORS }, action: { allow: LAB_EDITORS } },
  'people._index.tsx': { loader: { allow: SUPERVISOR }, action: { allow: SUPERVISOR } },
  'people.invite.tsx': { loader: { allow: SUPERVISOR }, action: { allow: SUPERVISOR } },
  'protocols.$protocolId.tsx': {
    loader: { allow: LAB_EDITORS },
    action: {
      allow: SUPERVISOR,
      form: { ...DEFAULT_PROTOCOL, intent: 'save', name: 'Access test protocol' },
    },
  },
  'protocols._index.tsx': { loader: { allow: LAB_EDITORS } },
  'protocols.new.tsx': { loader: { allow: SUPERVISOR }, action: { allow: SUPERVISOR } },
  'review._index.tsx': { loader: { allow: STAFF }, action: { allow: SUPERVISOR } },
  'review.sessions.$sessionId.tsx': {
    loader: { allow: STAFF },
    action: [
      { allow: SUPERVISOR, form: { intent: 'signoff' } },
      { allow: LAB_EDITORS, form: { intent: 'annotate' } },
    ],
  },
  'review.sessions.$sessionId_.replay.ts': { loader: { allow: STAFF } },
  'sessions.$sessionId.console.tsx': { loader: { allow: STAFF } },
  // Device tokens and feedback links are handed out by the people who run sessions; a
  // supervisor watches and reviews (refused by role before any lookup, so 403 everywhere).
  'sessions.$sessionId.tsx': { loader: { allow: STAFF }, action: { allow: ['operator', 'developer'] } },
  'sessions._index.tsx': { loader: { allow: STAFF } },
  'sessions.new.tsx': { loader: { allow: LAB_EDITORS }, action: { allow: LAB_EDITORS } },
  'sign-in.tsx': { loader: PUBLIC, action: PUBLIC },
  'sign-out.tsx': { loader: PUBLIC, action: { allow: 'anyone', allowedGets: 'sign-in' }, note: 'the action ends the session and sends everyone to sign-in' },
}
