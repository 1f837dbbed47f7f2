// Choices and limits that both a form (in the browser) and its server module need. Kept out
// of *.server.ts files, which never reach the client bundle.
import type { Role } from '~/server/services'

/** Classes the cue display and the simulator know. */
export const PROTOCOL_CLASSES = [
  { value: 'left', label: 'Left hand' },
  { value: 'right', label: 'Right hand' },
  { value: 'feet', label: 'Both feet' },
  { value: 'rest', label: 'Rest (no imagery)' },
] as const

/** One trial's length in seconds without and with the maximum rest jitter. */
export function trialSeconds(p: { fixationSeconds: number; cueSeconds: number; imagerySeconds: number; restSeconds: number; restJitterSeconds: number }) {
  const base = p.fixationSeconds + p.cueSeconds + p.imagerySeconds + p.restSeconds
  return { min: base, max: base + p.restJitterSeconds }
}

export const INVITE_ROLES: { value: Role; label: string }[] = [
  { value: 'operator', label: 'Operator — prepares and runs sessions' },
  { value: 'supervisor', label: 'Supervisor — people, protocols, review and sign-off' },
  { value: 'developer', label: 'Developer — bench, API tokens, ingest' },
  { value: 'participant', label: 'Participant — own feedback view and progress only' },
]

export const API_TOKEN_EXPIRY = [
  { value: '30', label: '30 days' },
  { value: '90', label: '90 days' },
  { value: '365', label: '1 year' },
  { value: 'never', label: 'No expiry' },
] as const

export const MIN_PASSWORD = 10
