import type { Route } from './+types/outbox'
import { PageHeader } from '~/components/page'
import { Pager } from '~/components/pager'
import { RouteError } from '~/components/route-error'
import { requireUser } from '~/server/auth.server'
import { outboxPage } from '~/server/outbox.server'
import { pageFrom } from '~/server/records.server'

export const meta: Route.MetaFunction = () => [{ title: 'Outbox · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'developer'] })
  return outboxPage(context.services.db, user, pageFrom(new URL(request.url)))
}

const URL_IN_TEXT = /(https?:\/\/[^\s<>"]+)/g

/** Plain text with its http(s) addresses as links; nothing else is interpreted. */
function TextWithLinks({ text }: { text: string }) {
  const parts = text.split(URL_IN_TEXT)
  return (
    <>
      {parts.map((part, i) =>
        i % 2 === 1 ? (
          <a key={i} href={part} className="break-all text-sky underline" rel="noreferrer noopener">
            {part}
          </a>
        ) : (
          <span key={i}>{part}</span>
        ),
      )}
    </>
  )
}

export default function Outbox({ loaderData }: Route.ComponentProps) {
  const { rows, page, pages, total } = loaderData
  return (
    <div className="max-w-4xl">
      <PageHeader
        title="Outbox"
        lead={`E-mail Tiller sent for your lab, newest first (${total}). Without an SMTP server configured, messages are held here instead of delivered.`}
      />
      {rows.length === 0 ? (
        <p className="panel text-haze">No messages yet.</p>
      ) : (
        <ol className="space-y-4">
          {rows.map((m) => (
            <li key={m.id}>
              <article className="panel" aria-labelledby={`msg-${m.id}`}>
                <header className="flex flex-wrap items-baseline justify-between gap-2">
                  <h2 id={`msg-${m.id}`} className="font-bold">
                    {m.subject}
                  </h2>
                  <time dateTime={m.createdAt} className="text-sm text-haze">
                    {new Date(m.createdAt).toLocaleString('en-GB', { dateStyle: 'medium', timeStyle: 'short' })}
                  </time>
                </header>
                <p className="mt-1 text-sm text-haze">
                  To <span className="text-fog">{m.to}</span> · {m.delivered ? 'delivered over SMTP' : 'held in the local outbox'}
                </p>
                <div className="mt-3 whitespace-pre-wrap rounded-md bg-ink-950 p-4 font-mono text-sm leading-relaxed">
                  <TextWithLinks text={m.text} />
                </div>
              </article>
            </li>
          ))}
        </ol>
      )}
      <Pager page={page} pages={pages} label="Outbox" />
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
