// Structured logs: one JSON object per line on stdout, so a lab can ship them anywhere.
type Level = 'debug' | 'info' | 'warn' | 'error'
const order: Record<Level, number> = { debug: 10, info: 20, warn: 30, error: 40 }
let threshold: Level = (process.env.LOG_LEVEL as Level) ?? 'info'

export function setLogLevel(level: Level) {
  threshold = level
}

export function log(level: Level, event: string, fields: Record<string, unknown> = {}) {
  if (order[level] < order[threshold]) return
  const line = JSON.stringify({ time: new Date().toISOString(), level, event, ...fields })
  if (level === 'error' || level === 'warn') process.stderr.write(line + '\n')
  else process.stdout.write(line + '\n')
}
