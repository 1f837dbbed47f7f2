import { Form, Link, redirect, useNavigation } from 'react-router'
import { useState } from 'react'
import type { Route } from './+types/sessions.new'
import { FieldError, PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { SessionCautions } from '~/components/sessions/session-cautions'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import { PrepareError, preparationChoices, prepareSession, prepareSessionSchema } from '~/server/sessions.server'

export const meta: Route.MetaFunction = () => [{ title: 'Prepare a session · Tiller' }]

const ROLES = ['operator', 'supervisor'] as const

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: [...ROLES] })
  return preparationChoices(context.services.db, user.labId)
}

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: [...ROLES] })
  const parsed = parseForm(prepareSessionSchema, await request.formData())
  if (!parsed.ok) return { errors: parsed.errors, values: parsed.values }
  try {
    const id = await prepareSession(context.services.db, user, parsed.data)
    return redirect(`/sessions/${id}`)
  } catch (error) {
    if (error instanceof PrepareError) return { errors: { [error.field]: [error.message] }, values: parsed.data as unknown as Record<string, string> }
    throw error
  }
}

export default function PrepareSession({ loaderData, actionData }: Route.ComponentProps) {
  const { participants, montages, protocols } = loaderData
  const errors = actionData?.errors ?? {}
  const values = actionData?.values ?? {}
  const busy = useNavigation().state === 'submitting'
  const [participantId, setParticipantId] = useState(values.participantId ?? '')
  const [protocolId, setProtocolId] = useState(values.protocolId ?? protocols[0]?.id ?? '')
  const chosen = participants.find((p) => p.id === participantId)
  const plan = protocols.find((p) => p.id === protocolId)
  const missing = participants.length === 0 ? 'participants' : montages.length === 0 ? 'montages' : protocols.length === 0 ? 'protocols' : null

  return (
    <div className="max-w-5xl">
      <PageHeader title="Prepare a session" lead="Choose who takes part, the cap and the protocol. You connect the device and start runs from the session page." />
      {missing ? (
        <p className="panel mb-6 border-rust/60 text-rust" role="alert">
          The lab has no {missing} yet. Add one first.
        </p>
      ) : null}
      <div className="grid gap-8 lg:grid-cols-[1fr_22rem]">
        <Form method="post" className="panel space-y-5" noValidate>
          <div>
            <label className="label" htmlFor="participantId">
              Participant
            </label>
            <select
              id="participantId"
              name="participantId"
              className="field"
              value={participantId}
              onChange={(e) => setParticipantId(e.target.value)}
              aria-invalid={!!errors.participantId}
              aria-describedby="participantId-error participantId-note"
            >
              <option value="">Choose…</option>
              {participants.map((p) => (
                <option key={p.id} value={p.id}>
                  {p.code} · consent {p.consentStatus}
                  {p.consentStatus === 'given' ? '' : ' (cannot start)'}
                </option>
              ))}
            </select>
            <FieldError id="participantId-error" message={errors.participantId} />
            {chosen ? (
              <p id="participantId-note" className={`mt-2 text-sm ${chosen.consentStatus === 'given' ? 'text-haze' : 'text-rust'}`}>
                {chosen.consentStatus === 'given'
                  ? `Consent given${chosen.consentDate ? ` on ${chosen.consentDate}` : ''}. ${chosen.handedness}-handed.`
                  : `Consent is ${chosen.consentStatus}. A session can only be prepared once consent is given.`}
                {chosen.notes ? <span className="mt-1 block italic">{chosen.notes}</span> : null}
              </p>
            ) : null}
          </div>
          <div>
            <label className="label" htmlFor="montageId">
              Montage
            </label>
            <select id="montageId" name="montageId" className="field" defaultValue={values.montageId ?? montages[0]?.id} aria-invalid={!!errors.montageId} aria-describedby="montageId-error">
              {montages.map((m) => (
                <option key={m.id} value={m.id}>
                  {m.name} · {m.channelCount} channels{m.reference ? ` · ref ${m.reference}` : ''}
                </option>
              ))}
            </select>
            <FieldError id="montageId-error" message={errors.montageId} />
          </div>
          <div>
            <label className="label" htmlFor="protocolId">
              Protocol
            </label>
            <select id="protocolId" name="protocolId" className="field" value={protocolId} onChange={(e) => setProtocolId(e.target.value)} aria-invalid={!!errors.protocolId} aria-describedby="protocolId-error protocol-note">
              {protocols.map((p) => (
                <option key={p.id} value={p.id}>
                  {p.name}
                </option>
              ))}
            </select>
            <FieldError id="protocolId-error" message={errors.protocolId} />
            {plan ? (
              <p id="protocol-note" className="mt-2 text-sm text-haze">
                Classes {plan.classes.join(', ')} · {plan.trialsPerClass} trials per class · about{' '}
                {Math.round((plan.trialSeconds * plan.trialsPerClass * plan.classes.length) / 60)} min per run · band {plan.band[0]}–{plan.band[1]} Hz
              </p>
            ) : null}
          </div>
          <div>
            <label className="label" htmlFor="notes">
              Notes (scheduling, cap fitting, anything the next person should know)
            </label>
            <textarea id="notes" name="notes" rows={4} className="field" defaultValue={values.notes ?? ''} aria-invalid={!!errors.notes} aria-describedby="notes-error" />
            <FieldError id="notes-error" message={errors.notes} />
          </div>
          <div>
            <label className="flex items-start gap-3 text-sm">
              <input type="checkbox" name="cautionsRead" className="mt-1 h-4 w-4 accent-brass" aria-describedby="cautionsRead-error" defaultChecked={values.cautionsRead === 'on'} />
              <span>This session runs under an approved protocol with licensed supervision, and I have read the cautions.</span>
            </label>
            <FieldError id="cautionsRead-error" message={errors.cautionsRead} />
          </div>
          <div className="flex gap-3">
            <button type="submit" className="btn-primary" disabled={busy || !!missing}>
              {busy ? 'Preparing…' : 'Prepare session'}
            </button>
            <Link to="/sessions" className="btn-quiet">
              Cancel
            </Link>
          </div>
        </Form>
        <SessionCautions />
      </div>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
