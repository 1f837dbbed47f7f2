// Browser-side calls to the live API (docs/live-api.md): form-encoded POSTs to the /live
// resource routes, answered with JSON. Errors come back as a message the screen can show.
export type LiveReply<T> = { ok: true; data: T } | { ok: false; message: string; status: number }

export async function postLive<T = unknown>(path: string, fields: Record<string, string | string[] | number | undefined>): Promise<LiveReply<T>> {
  const body = new URLSearchParams()
  for (const [key, value] of Object.entries(fields)) {
    if (value === undefined) continue
    for (const item of Array.isArray(value) ? value : [value]) body.append(key, String(item))
  }
  let response: Response
  try {
    response = await fetch(path, { method: 'POST', body, headers: { Accept: 'application/json' }, credentials: 'same-origin' })
  } catch {
    return { ok: false, message: 'The server did not answer. Check the network and try again.', status: 0 }
  }
  let json: unknown = null
  try {
    json = await response.json()
  } catch {
    // fall through: a non-JSON error page
  }
  if (!response.ok || (json && typeof json === 'object' && (json as { ok?: unknown }).ok === false)) {
    const message = json && typeof json === 'object' && 'message' in json ? String((json as { message: unknown }).message) : `The server refused (${response.status}).`
    return { ok: false, message, status: response.status }
  }
  return { ok: true, data: json as T }
}

export const livePaths = {
  operatorStream: (sessionId: string) => `/live/${sessionId}/operator`,
  feedbackStream: (sessionId: string, token?: string | null) => `/live/${sessionId}/feedback${token ? `?token=${encodeURIComponent(token)}` : ''}`,
  runs: (sessionId: string) => `/live/${sessionId}/runs`,
  deviceTokens: (sessionId: string) => `/live/${sessionId}/device-tokens`,
  feedbackLink: (sessionId: string) => `/live/${sessionId}/feedback-link`,
  training: (sessionId: string) => `/live/${sessionId}/training`,
  decoder: (sessionId: string) => `/live/${sessionId}/decoder`,
  annotations: (sessionId: string) => `/live/${sessionId}/annotations`,
}
