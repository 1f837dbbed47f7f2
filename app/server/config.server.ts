// Configuration from the environment, validated once at start with readable messages.
import { randomBytes } from 'node:crypto'
import { z } from 'zod'

const envSchema = z.object({
  NODE_ENV: z.enum(['development', 'production', 'test']).default('development'),
  PORT: z.coerce.number().int().min(1).max(65535).default(3000),
  HOST: z.string().default('127.0.0.1'),
  TILLER_DATA_DIR: z.string().min(1).default('./data'),
  DATABASE_URL: z
    .string()
    .regex(/^postgres(ql)?:\/\//, 'DATABASE_URL must be a postgres:// or postgresql:// URL')
    .optional(),
  SESSION_SECRET: z.string().min(32, 'SESSION_SECRET must be at least 32 characters').optional(),
  SMTP_URL: z.string().regex(/^smtps?:\/\//, 'SMTP_URL must start with smtp:// or smtps://').optional(),
  PUBLIC_URL: z.string().url('PUBLIC_URL must be an absolute URL such as https://tiller.lab.example').optional(),
  MAIL_FROM: z.string().default('Tiller <tiller@localhost>'),
  LOG_LEVEL: z.enum(['debug', 'info', 'warn', 'error']).default('info'),
})

export interface Config {
  production: boolean
  port: number
  host: string
  /** 'memory://', a PGlite directory, or the postgres URL. */
  databaseLocation: string
  sessionSecret: string
  sessionSecretGenerated: boolean
  smtpUrl: string | null
  publicUrl: string
  mailFrom: string
  logLevel: 'debug' | 'info' | 'warn' | 'error'
}

export class ConfigError extends Error {}

export function loadConfig(env: Record<string, string | undefined> = process.env): Config {
  const parsed = envSchema.safeParse(Object.fromEntries(Object.entries(env).filter(([, v]) => v !== '')))
  if (!parsed.success) {
    const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`)
    throw new ConfigError(`Invalid configuration:\n${lines.join('\n')}`)
  }
  const e = parsed.data
  const production = e.NODE_ENV === 'production'
  const sessionSecretGenerated = !e.SESSION_SECRET
  return {
    production,
    port: e.PORT,
    host: e.HOST,
    databaseLocation: e.DATABASE_URL ?? e.TILLER_DATA_DIR,
    // A generated secret signs out everyone at each restart; fine for dev and demo only.
    sessionSecret: e.SESSION_SECRET ?? randomBytes(32).toString('hex'),
    sessionSecretGenerated,
    smtpUrl: e.SMTP_URL ?? null,
    publicUrl: (e.PUBLIC_URL ?? `http://localhost:${e.PORT}`).replace(/\/$/, ''),
    mailFrom: e.MAIL_FROM,
    logLevel: e.LOG_LEVEL,
  }
}
