// Wires the operator stream to the console: low-rate events into the zustand store, high-rate
// frames (signal, band power, decisions, cues for the traces) to whichever charts are mounted.
import { createContext, useContext, useEffect, useRef, useState } from 'react'
import { useStore } from 'zustand'
import type { StoreApi } from 'zustand/vanilla'
import { OPERATOR_EVENT_NAMES, type BandPowerEvent, type CueInfo, type DecisionEvent, type OperatorEventName, type OperatorEvents, type SignalEvent } from '~/live/events'
import { createConsoleStore, type ConsoleData, type ConsoleStore } from '~/lib/console-store'
import { SampleClock } from './sample-clock'

export interface FrameSinks {
  signal: Set<(e: SignalEvent) => void>
  bandpower: Set<(e: BandPowerEvent) => void>
  decision: Set<(e: DecisionEvent) => void>
  cue: Set<(e: CueInfo) => void>
}

interface ConsoleContextValue {
  store: StoreApi<ConsoleStore>
  sinks: FrameSinks
  clock: SampleClock
  sessionId: string
}

const Ctx = createContext<ConsoleContextValue | null>(null)

const HIGH_RATE = new Set<OperatorEventName>(['signal', 'bandpower'])

export function ConsoleProvider({ sessionId, streamUrl, seed, children }: { sessionId: string; streamUrl: string; seed: Partial<ConsoleData>; children: React.ReactNode }) {
  const [value] = useState<ConsoleContextValue>(() => ({
    store: createConsoleStore(seed),
    sinks: { signal: new Set(), bandpower: new Set(), decision: new Set(), cue: new Set() },
    clock: new SampleClock(500),
    sessionId,
  }))
  useEffect(() => {
    const { store, sinks, clock } = value
    const source = new EventSource(streamUrl, { withCredentials: true })
    store.getState().setStream('connecting')
    source.onopen = () => store.getState().setStream('open')
    source.onerror = () => store.getState().setStream(source.readyState === EventSource.CLOSED ? 'closed' : 'retrying')
    const handlers = OPERATOR_EVENT_NAMES.map((name) => {
      const handler = (event: MessageEvent) => {
        let data: unknown
        try {
          data = JSON.parse(event.data)
        } catch {
          return
        }
        if (name === 'signal') for (const f of sinks.signal) f(data as SignalEvent)
        else if (name === 'bandpower') for (const f of sinks.bandpower) f(data as BandPowerEvent)
        else if (name === 'decision') for (const f of sinks.decision) f(data as DecisionEvent)
        else if (name === 'cue') for (const f of sinks.cue) f(data as CueInfo)
        if (name === 'snapshot' || name === 'device') {
          const rate = name === 'snapshot' ? (data as OperatorEvents['snapshot']).device.rateHz : (data as OperatorEvents['device']).rateHz
          if (rate) clock.setRate(rate)
        }
        if (!HIGH_RATE.has(name)) store.getState().apply(name, data as never)
      }
      source.addEventListener(name, handler as EventListener)
      return [name, handler] as const
    })
    return () => {
      for (const [name, handler] of handlers) source.removeEventListener(name, handler as EventListener)
      source.close()
    }
  }, [value, streamUrl])
  return <Ctx.Provider value={value}>{children}</Ctx.Provider>
}

function useCtx(): ConsoleContextValue {
  const v = useContext(Ctx)
  if (!v) throw new Error('console components need a ConsoleProvider')
  return v
}

export function useConsole<T>(selector: (s: ConsoleStore) => T): T {
  return useStore(useCtx().store, selector)
}

export function useConsoleApi() {
  return useCtx()
}

/** Subscribes a frame handler for the component's lifetime; the latest handler is always called. */
export function useFrames<K extends keyof FrameSinks>(kind: K, handler: FrameSinks[K] extends Set<infer F> ? F : never) {
  const { sinks } = useCtx()
  const ref = useRef(handler)
  ref.current = handler
  useEffect(() => {
    const f = ((e: never) => (ref.current as (e: never) => void)(e)) as never
    ;(sinks[kind] as Set<unknown>).add(f)
    return () => void (sinks[kind] as Set<unknown>).delete(f)
  }, [sinks, kind])
}
