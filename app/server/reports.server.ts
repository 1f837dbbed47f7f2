// E-mailed reports through the one mail path (context.services.mail: nodemailer to SMTP_URL, or
// the local fake SMTP server that files everything into the outbox):
// - sendRunSummary: when a run ends, every active supervisor of the lab gets its figures and a link;
// - the weekly lab digest, switched on per lab (labs.weekly_digest), sent by sendWeeklyDigests.
import { and, asc, desc, eq, gte, inArray, lt } from 'drizzle-orm'
import { z } from 'zod'
import type { Database } from '~/db/client.server'
import { auditEvents, decisions, labs, participants, protocols, runs, sessions, trials, users } from '~/db/schema'
import { audit } from '~/server/audit.server'
import { feedbackRunMetrics, latencySummary, secondsPerTrialOf, type TrialRow } from '~/server/review.server'
import type { Services, SessionUser } from '~/server/services'

async function supervisorsOf(db: Database, labId: string) {
  return db
    .select({ email: users.email, name: users.name })
    .from(users)
    .where(and(eq(users.labId, labId), eq(users.role, 'supervisor'), eq(users.active, true)))
    .orderBy(asc(users.email))
}

const pct = (v: number | null | undefined) => (v === null || v === undefined ? '—' : `${(v * 100).toFixed(1)} %`)
const num = (v: number | null | undefined, d = 3) => (v === null || v === undefined ? '—' : v.toFixed(d))
const escapeHtml = (s: string) => s.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`)

export interface RunSummary {
  subject: string
  text: string
  html: string
  figures: { trials: number; accuracy: number | null; kappa: number | null; itrBitsPerTrial: number | null; itrBitsPerMinute: number | null; latencyP50Ms: number | null; latencyP99Ms: number | null }
}

/** The summary of one run as e-mail text and HTML; null when the run does not exist. */
export async function runSummary(db: Database, publicUrl: string, runId: string): Promise<(RunSummary & { labId: string }) | null> {
  const [row] = await db
    .select({ run: runs, session: sessions, participantCode: participants.code, protocol: protocols })
    .from(runs)
    .innerJoin(sessions, eq(sessions.id, runs.sessionId))
    .innerJoin(participants, eq(participants.id, sessions.participantId))
    .innerJoin(protocols, eq(protocols.id, sessions.protocolId))
    .where(eq(runs.id, runId))
  if (!row) return null
  const { run, session, protocol } = row
  const trialRows: TrialRow[] = await db
    .select({ index: trials.index, label: trials.label, cueSample: trials.cueSample, endSample: trials.endSample, outcome: trials.outcome, decidedClass: trials.decidedClass })
    .from(trials)
    .where(eq(trials.runId, runId))
    .orderBy(asc(trials.index))
  const latencies = await db.select({ us: decisions.latencyUs }).from(decisions).where(eq(decisions.runId, runId))
  const latency = latencySummary(latencies.map((l) => l.us))
  const m = run.kind === 'feedback' ? feedbackRunMetrics(protocol.classes, trialRows, secondsPerTrialOf(trialRows, run.rateHz, protocol)) : null
  const link = `${publicUrl}/review/sessions/${session.id}`
  const minutes = run.startedAt && run.endedAt ? ((run.endedAt.getTime() - run.startedAt.getTime()) / 60_000).toFixed(1) : '—'
  const subject = `Run ${run.index} (${run.kind}) of ${row.participantCode} ${run.status}: ${m ? `accuracy ${pct(m.accuracy)}, kappa ${num(m.kappa, 2)}` : `${trialRows.length} trials`}`
  const lines: [string, string][] = [
    ['Participant', row.participantCode],
    ['Protocol', protocol.name],
    ['Run', `${run.index}, ${run.kind}, ${run.status}`],
    ['Length', `${minutes} min`],
    ['Trials', String(trialRows.length)],
  ]
  if (m) {
    lines.push(
      ['Accuracy', `${pct(m.accuracy)} of ${m.decided} decided trials (${m.timeouts} timeouts; chance level ${pct(m.chanceLevel)})`],
      ["Cohen's kappa", num(m.kappa)],
      ['ITR', `${num(m.itrBitsPerTrial)} bits per trial, ${num(m.itrBitsPerMinute, 2)} bits per minute`],
    )
  }
  if (latency.count) lines.push(['Decision latency', `median ${num(latency.p50Ms, 2)} ms, p99 ${num(latency.p99Ms, 2)} ms over ${latency.count} decisions`])
  const caution = 'Tiller is not a medical device; these figures are not a diagnosis.'
  const text = `${lines.map(([k, v]) => `${k}: ${v}`).join('\n')}\n\nReview and sign off: ${link}\n\n${caution}\n`
  const html = `<table>${lines.map(([k, v]) => `<tr><th align="left">${escapeHtml(k)}</th><td>${escapeHtml(v)}</td></tr>`).join('')}</table><p><a href="${escapeHtml(link)}">Review and sign off</a></p><p><small>${caution}</small></p>`
  return {
    labId: session.labId,
    subject,
    text,
    html,
    figures: {
      trials: trialRows.length,
      accuracy: m?.accuracy ?? null,
      kappa: m?.kappa ?? null,
      itrBitsPerTrial: m?.itrBitsPerTrial ?? null,
      itrBitsPerMinute: m?.itrBitsPerMinute ?? null,
      latencyP50Ms: latency.p50Ms,
      latencyP99Ms: latency.p99Ms,
    },
  }
}

/**
 * Sends the run's summary to every active supervisor of its lab. Call it once a run has ended
 * and its decisions and trials are flushed. A failed delivery is logged and reported in the
 * result, never thrown: the run's record must not depend on the mail server.
 */
export async function sendRunSummary(services: Pick<Services, 'db' | 'mail' | 'config'>, runId: string): Promise<{ sent: number; failed: number }> {
  const summary = await runSummary(services.db, services.config.publicUrl, runId)
  if (!summary) return { sent: 0, failed: 0 }
  let sent = 0
  let failed = 0
  for (const to of await supervisorsOf(services.db, summary.labId)) {
    try {
      await services.mail.send({ to: to.email, subject: summary.subject, text: `Hello ${to.name},\n\n${summary.text}`, html: summary.html, labId: summary.labId })
      sent++
    } catch (error) {
      failed++
      console.error(`run summary for ${runId} to ${to.email} failed: ${(error as Error).message}`)
    }
  }
  return { sent, failed }
}

// ---------------------------------------------------------------------------------------------
// Weekly digest

export const digestSwitchForm = z.object({ intent: z.literal('weekly-digest'), enabled: z.enum(['on', 'off']) })

export async function setWeeklyDigest(db: Database, actor: SessionUser, enabled: boolean, ip: string | null): Promise<void> {
  if (actor.role !== 'supervisor') throw new Error('Only a supervisor can change the weekly digest.')
  await db.update(labs).set({ weeklyDigest: enabled }).where(eq(labs.id, actor.labId))
  await audit(db, { labId: actor.labId, actorId: actor.id, action: 'lab.weekly-digest', detail: { enabled }, ip })
}

export async function weeklyDigestEnabled(db: Database, labId: string): Promise<boolean> {
  const [lab] = await db.select({ on: labs.weeklyDigest }).from(labs).where(eq(labs.id, labId))
  return lab?.on ?? false
}

const WEEK_MS = 7 * 24 * 60 * 60_000

/** The digest of a lab for the seven days before `now`. */
export async function weeklyDigest(db: Database, publicUrl: string, labId: string, now: Date) {
  const since = new Date(now.getTime() - WEEK_MS)
  const recent = await db
    .select({ id: sessions.id, code: participants.code, status: sessions.status, signoff: sessions.signoffState, createdAt: sessions.createdAt })
    .from(sessions)
    .innerJoin(participants, eq(participants.id, sessions.participantId))
    .where(and(eq(sessions.labId, labId), gte(sessions.createdAt, since), lt(sessions.createdAt, now)))
    .orderBy(asc(sessions.createdAt))
  const awaiting = await db
    .select({ id: sessions.id, code: participants.code, createdAt: sessions.createdAt })
    .from(sessions)
    .innerJoin(participants, eq(participants.id, sessions.participantId))
    .where(and(eq(sessions.labId, labId), inArray(sessions.status, ['ended', 'interrupted', 'imported']), eq(sessions.signoffState, 'pending')))
    .orderBy(asc(sessions.createdAt))
  const flagged = recent.filter((s) => s.signoff === 'flagged')
  const day = (d: Date) => d.toISOString().slice(0, 10)
  const subject = `Weekly digest: ${recent.length} sessions, ${awaiting.length} awaiting sign-off`
  const text = [
    `Sessions from ${day(since)} to ${day(now)}: ${recent.length}`,
    ...recent.map((s) => `  ${day(s.createdAt)} ${s.code} ${s.status}, sign-off ${s.signoff}: ${publicUrl}/review/sessions/${s.id}`),
    '',
    `Awaiting sign-off: ${awaiting.length}`,
    ...awaiting.slice(0, 20).map((s) => `  ${day(s.createdAt)} ${s.code}: ${publicUrl}/review/sessions/${s.id}`),
    '',
    `Flagged this week: ${flagged.length}`,
    '',
    `The session log: ${publicUrl}/review`,
    'Turn this digest off on the review page.',
  ].join('\n')
  return { subject, text, sessions: recent.length, awaiting: awaiting.length, flagged: flagged.length }
}

/**
 * Sends the digest to the supervisors of every lab that switched it on and has had no digest
 * in the last seven days (an audit event 'digest.sent' records each one, so a restart never
 * sends twice). Returns how many e-mails went out.
 */
export async function sendWeeklyDigests(services: Pick<Services, 'db' | 'mail' | 'config'>, now = new Date()): Promise<number> {
  const { db } = services
  const on = await db.select({ id: labs.id }).from(labs).where(eq(labs.weeklyDigest, true))
  let sent = 0
  for (const lab of on) {
    const [last] = await db
      .select({ at: auditEvents.at })
      .from(auditEvents)
      .where(and(eq(auditEvents.labId, lab.id), eq(auditEvents.action, 'digest.sent')))
      .orderBy(desc(auditEvents.at))
      .limit(1)
    if (last && now.getTime() - last.at.getTime() < WEEK_MS) continue
    const digest = await weeklyDigest(db, services.config.publicUrl, lab.id, now)
    const recipients = await supervisorsOf(db, lab.id)
    for (const to of recipients) {
      try {
        await services.mail.send({ to: to.email, subject: digest.subject, text: digest.text, labId: lab.id })
        sent++
      } catch (error) {
        console.error(`weekly digest to ${to.email} failed: ${(error as Error).message}`)
      }
    }
    await audit(db, { labId: lab.id, actorId: null, action: 'digest.sent', detail: { recipients: recipients.length, sessions: digest.sessions } })
  }
  return sent
}

/** Checks hourly whether a digest is due; server.ts starts it and calls stop() on shutdown. */
export function startWeeklyDigestSchedule(services: Pick<Services, 'db' | 'mail' | 'config'>, everyMs = 60 * 60_000): { stop(): void } {
  const timer = setInterval(() => {
    sendWeeklyDigests(services).catch((error: Error) => console.error(`weekly digest: ${error.message}`))
  }, everyMs)
  timer.unref()
  return { stop: () => clearInterval(timer) }
}
