// Annotations typed during the session: stamped by the server with the run in progress.
import { useState } from 'react'
import type { AnnotationEvent } from '~/live/events'
import { livePaths, postLive } from './live-client'
import { useConsole, useConsoleApi } from './console-context'

export function AnnotationsPanel() {
  const { sessionId, store } = useConsoleApi()
  const notes = useConsole((s) => s.annotations)
  const [text, setText] = useState('')
  const [error, setError] = useState<string | null>(null)
  const [busy, setBusy] = useState(false)
  return (
    <section aria-labelledby="notes-h" className="panel p-3">
      <h2 id="notes-h" className="mb-2 text-sm font-bold">
        Annotations
      </h2>
      <form
        className="flex gap-2"
        onSubmit={async (e) => {
          e.preventDefault()
          const value = text.trim()
          if (!value) return setError('Write something first')
          setBusy(true)
          setError(null)
          const reply = await postLive<AnnotationEvent>(livePaths.annotations(sessionId), { text: value })
          setBusy(false)
          if (!reply.ok) return setError(reply.message)
          if (reply.data && typeof reply.data === 'object' && 'id' in reply.data) store.getState().apply('annotation', reply.data)
          setText('')
        }}
      >
        <label htmlFor="annotation-text" className="sr-only">
          Annotation
        </label>
        <input id="annotation-text" className="field py-1 text-sm" maxLength={2000} value={text} onChange={(e) => setText(e.target.value)} placeholder="e.g. participant moved, cap adjusted" />
        <button type="submit" className="btn-quiet" disabled={busy}>
          Add
        </button>
      </form>
      {error ? (
        <p role="alert" className="mt-1 text-xs text-rust">
          {error}
        </p>
      ) : null}
      <ol className="mt-2 max-h-40 space-y-1 overflow-y-auto text-sm" data-testid="annotations">
        {notes.length === 0 ? <li className="text-xs text-haze">None yet.</li> : null}
        {[...notes].reverse().map((a) => (
          <li key={a.id}>
            <span className="text-xs text-haze">{new Date(a.createdAt).toLocaleTimeString('en-GB')}</span> {a.text}
            {a.authorName ? <span className="text-xs text-haze"> — {a.authorName}</span> : null}
          </li>
        ))}
      </ol>
    </section>
  )
}
