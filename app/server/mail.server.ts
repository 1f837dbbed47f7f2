// E-mail through nodemailer over SMTP. Without SMTP_URL (dev, demo, tests) a local fake SMTP
// server on loopback receives every message and stores it in the outbox table, where
// supervisors and developers read it. Real delivery needs nothing but SMTP_URL.
import type { AddressInfo } from 'node:net'
import { simpleParser } from 'mailparser'
import nodemailer from 'nodemailer'
import { SMTPServer } from 'smtp-server'
import type { Database } from '~/db/client.server'
import { outbox } from '~/db/schema'
import type { Config } from '~/server/config.server'
import type { Mailer } from '~/server/services'

export interface MailService {
  mailer: Mailer
  /** Where the local fake listens, when it is used. */
  fakeSmtpPort: number | null
  close(): Promise<void>
}

/** Starts the local fake SMTP server that files every message into the outbox. */
async function startFakeSmtp(db: Database): Promise<{ port: number; close(): Promise<void> }> {
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    logger: false,
    banner: 'Tiller local outbox',
    size: 5 * 1024 * 1024,
    onData(stream, session, callback) {
      simpleParser(stream)
        .then(async (mail) => {
          const labId = typeof mail.headers.get('x-tiller-lab') === 'string' ? (mail.headers.get('x-tiller-lab') as string) : null
          const to = session.envelope.rcptTo.map((r) => r.address).join(', ')
          await db.insert(outbox).values({
            labId,
            to,
            from: session.envelope.mailFrom ? session.envelope.mailFrom.address : '',
            subject: mail.subject ?? '(no subject)',
            text: mail.text ?? '',
            html: typeof mail.html === 'string' ? mail.html : null,
            messageId: mail.messageId ?? null,
            delivered: false,
          })
          callback()
        })
        .catch((error: Error) => callback(error))
    },
  })
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject)
    server.listen(0, '127.0.0.1', () => resolve())
  })
  const port = (server.server.address() as AddressInfo).port
  return { port, close: () => new Promise<void>((resolve) => server.close(() => resolve())) }
}

export async function createMailService(config: Config, db: Database): Promise<MailService> {
  const fake = config.smtpUrl ? null : await startFakeSmtp(db)
  const transport = fake
    ? nodemailer.createTransport({ host: '127.0.0.1', port: fake.port, secure: false, ignoreTLS: true })
    : nodemailer.createTransport(config.smtpUrl as string)
  const mailer: Mailer = {
    async send({ to, subject, text, html, labId }) {
      const info = await transport.sendMail({
        from: config.mailFrom,
        to,
        subject,
        text,
        html,
        headers: labId ? { 'X-Tiller-Lab': labId } : undefined,
      })
      // With real SMTP the outbox keeps a copy of what was handed over for delivery.
      if (!fake) {
        await db.insert(outbox).values({ labId: labId ?? null, to, from: config.mailFrom, subject, text, html: html ?? null, messageId: info.messageId, delivered: true })
      }
    },
  }
  return {
    mailer,
    fakeSmtpPort: fake?.port ?? null,
    async close() {
      transport.close()
      await fake?.close()
    },
  }
}
