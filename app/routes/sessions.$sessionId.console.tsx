import { Link, useRouteLoaderData } from 'react-router'
import type { Route } from './+types/sessions.$sessionId.console'
import { RouteError } from '~/components/route-error'
import { AnnotationsPanel } from '~/components/console/annotations-panel'
import { ConsoleProvider } from '~/components/console/console-context'
import { CueNow } from '~/components/console/cue-now'
import { DecoderTracesPanel } from '~/components/console/decoder-traces-panel'
import { EegPanel } from '~/components/console/eeg-panel'
import { EventsPanel } from '~/components/console/events-panel'
import { FiguresPanel } from '~/components/console/figures-panel'
import { livePaths } from '~/components/console/live-client'
import { QualityPanel } from '~/components/console/quality-panel'
import { RunControls } from '~/components/console/run-controls'
import { requireSessionAccess, requireUser } from '~/server/auth.server'
import type { loader as sessionLoader } from './sessions.$sessionId'

export const meta: Route.MetaFunction = () => [{ title: 'Console · Tiller' }]

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['operator', 'supervisor', 'developer'] })
  await requireSessionAccess(context, user, params.sessionId)
  return { role: user.role }
}

export default function ConsolePage({ loaderData }: Route.ComponentProps) {
  const parent = useRouteLoaderData<typeof sessionLoader>('routes/sessions.$sessionId')
  if (!parent) return null
  const { session, participant, montage, protocol, annotations } = parent.overview
  const channels = montage?.channels.map((c) => c.name) ?? []
  const classes = protocol?.classes ?? []
  return (
    <ConsoleProvider
      sessionId={session.id}
      streamUrl={livePaths.operatorStream(session.id)}
      seed={{
        sessionStatus: session.status,
        classes,
        montage: channels,
        annotations: annotations.map((a) => ({ id: a.id, runId: a.runId, sample: a.sample, text: a.text, authorName: a.author, createdAt: a.createdAt })),
      }}
    >
      <div className="space-y-3">
        <div className="flex flex-wrap items-baseline justify-between gap-2">
          <h1 className="text-xl font-bold tracking-tight">
            Console · {participant?.code} <span className="text-base font-normal text-haze">· {protocol?.name} · {montage?.name}</span>
          </h1>
          <Link to={`/sessions/${session.id}`} className="text-sm text-brass underline">
            Session page: device tokens, feedback link, decoders
          </Link>
        </div>
        <RunControls defaultTrialsPerClass={protocol?.trialsPerClass ?? 20} canControl={loaderData.role === 'operator' || loaderData.role === 'developer'} />
        <div className="grid gap-3 2xl:grid-cols-[1fr_20rem] xl:grid-cols-[1fr_18rem]">
          <div className="min-w-0 space-y-3">
            <EegPanel channels={channels} band={protocol?.band ?? [8, 30]} />
            <DecoderTracesPanel classes={classes} />
          </div>
          <div className="space-y-3">
            <CueNow classes={classes} />
            <QualityPanel montage={montage?.channels ?? []} />
            <FiguresPanel />
            <AnnotationsPanel />
            <EventsPanel />
          </div>
        </div>
      </div>
    </ConsoleProvider>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
