// The participant's feedback link: a URL with a secret token, for a second screen that is not
// signed in. Making a new one invalidates the previous link.
import { useActionData, useFetcher } from 'react-router'
import { CopyField } from '~/components/sessions/copy-field'

export function FeedbackLinkPanel({ sessionId, hasLink, disabled }: { sessionId: string; hasLink: boolean; disabled: boolean }) {
  const fetcher = useFetcher<{ feedbackUrl?: string; revoked?: boolean }>()
  // Before the page has hydrated the form posts as a document; its answer arrives as action data.
  const documentAnswer = useActionData() as { feedbackUrl?: string } | undefined
  const url = fetcher.data?.feedbackUrl ?? documentAnswer?.feedbackUrl
  return (
    <section aria-labelledby="feedback-link-h" className="panel">
      <h2 id="feedback-link-h" className="font-bold">
        Participant feedback view
      </h2>
      <p className="mt-1 text-sm text-haze">
        Open it on the participant's screen. A signed-in participant can also use{' '}
        <a className="underline" href={`/feedback/${sessionId}`}>
          /feedback/{sessionId.slice(0, 8)}…
        </a>
      </p>
      <div className="mt-3 flex flex-wrap gap-2">
        <fetcher.Form method="post">
          <input type="hidden" name="intent" value="feedback-link" />
          <button type="submit" className="btn-quiet" disabled={disabled || fetcher.state !== 'idle'}>
            {hasLink ? 'Make a new link' : 'Make a link'}
          </button>
        </fetcher.Form>
        {hasLink && !url ? (
          <fetcher.Form method="post">
            <input type="hidden" name="intent" value="revoke-feedback-link" />
            <button type="submit" className="btn-danger" disabled={disabled || fetcher.state !== 'idle'}>
              Withdraw link
            </button>
          </fetcher.Form>
        ) : null}
      </div>
      {url ? (
        <div className="mt-3" data-testid="feedback-link">
          <p className="text-sm text-brass">Shown once. A new link replaces this one.</p>
          <CopyField value={url} label="Feedback link" />
        </div>
      ) : null}
      {hasLink && !url ? <p className="mt-2 text-xs text-haze">A link is active.</p> : null}
    </section>
  )
}
