// One EventSource for a component's lifetime, with named listeners. The browser reconnects
// by itself and sends Last-Event-ID, so the server can resume the stream; the `open` state
// lets a screen say when the connection to the server itself is gone.
import { useEffect, useRef, useState } from 'react'

export type StreamState = 'connecting' | 'open' | 'retrying' | 'closed'

export function useEventSource(url: string | null, handlers: Record<string, (data: unknown) => void>): StreamState {
  const [state, setState] = useState<StreamState>('connecting')
  const latest = useRef(handlers)
  latest.current = handlers
  const names = Object.keys(handlers).sort().join(',')
  useEffect(() => {
    if (!url) return
    const source = new EventSource(url, { withCredentials: true })
    setState('connecting')
    source.onopen = () => setState('open')
    source.onerror = () => setState(source.readyState === EventSource.CLOSED ? 'closed' : 'retrying')
    const listeners = names.split(',').filter(Boolean).map((name) => {
      const listener = (event: MessageEvent) => {
        let data: unknown
        try {
          data = JSON.parse(event.data)
        } catch {
          return
        }
        latest.current[name]?.(data)
      }
      source.addEventListener(name, listener as EventListener)
      return [name, listener] as const
    })
    return () => {
      for (const [name, listener] of listeners) source.removeEventListener(name, listener as EventListener)
      source.close()
    }
  }, [url, names])
  return state
}
