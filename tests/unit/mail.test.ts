// E-mail through the real mail service (app/server/mail.server.ts): nodemailer speaking SMTP
// to the local fake SMTP server on loopback, which files each message into the outbox table;
// and, with SMTP_URL set, delivery to that server plus a delivered copy in the outbox.
import { SMTPServer } from 'smtp-server'
import type { AddressInfo } from 'node:net'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { desc, eq } from 'drizzle-orm'
import { openDatabase, type DatabaseHandle } from '~/db/client.server'
import { labs, outbox } from '~/db/schema'
import { loadConfig } from '~/server/config.server'
import { createMailService } from '~/server/mail.server'
import { invitePerson } from '~/server/people.server'

let handle: DatabaseHandle
let labId: string
beforeAll(async () => {
  handle = await openDatabase('memory://')
  await handle.migrate()
  labId = (await handle.db.insert(labs).values({ name: 'Mail test lab' }).returning())[0].id
})
afterAll(async () => handle.close())

const baseEnv = { NODE_ENV: 'test', SESSION_SECRET: 'mail-test-secret-mail-test-secret-42', PUBLIC_URL: 'http://tiller.test', MAIL_FROM: 'Tiller <tiller@lab.example>' }

describe('without SMTP_URL: the local fake SMTP server and the outbox', () => {
  it('listens on loopback only and stores what nodemailer sends, with the lab', async () => {
    const mail = await createMailService(loadConfig(baseEnv), handle.db)
    try {
      expect(mail.fakeSmtpPort).toBeGreaterThan(0)
      await mail.mailer.send({ to: 'ada@lab.example', subject: 'Session report — HS-014', text: 'Accuracy 78 %.\nLink: http://tiller.test/review/1', labId })
      const [row] = await handle.db.select().from(outbox).where(eq(outbox.to, 'ada@lab.example'))
      expect(row).toMatchObject({ labId, from: 'tiller@lab.example', subject: 'Session report — HS-014', delivered: false })
      // mailparser returns the text body with the sender's line breaks.
      expect(row.text.trim()).toBe('Accuracy 78 %.\nLink: http://tiller.test/review/1')
      expect(row.messageId).toMatch(/^<.+@.+>$/)

      // The fake answers on 127.0.0.1 (SMTP greeting, RFC 5321 §4.2: "220 ...").
      const net = await import('node:net')
      const greeting = await new Promise<string>((resolve, reject) => {
        const socket = net.connect(mail.fakeSmtpPort!, '127.0.0.1')
        socket.once('data', (d) => {
          resolve(d.toString())
          socket.end('QUIT\r\n')
        })
        socket.once('error', reject)
      })
      expect(greeting).toMatch(/^220 /)
    } finally {
      await mail.close()
    }
  })

  it('an invitation goes through SMTP into the outbox with a working link', async () => {
    const mail = await createMailService(loadConfig(baseEnv), handle.db)
    try {
      const { link } = await invitePerson({ db: handle.db, mail: mail.mailer, publicUrl: 'http://tiller.test' }, { labId, invitedBy: '00000000-0000-4000-8000-000000000001', email: 'new.person@lab.example', name: 'New Person', role: 'operator' })
      const [row] = await handle.db.select().from(outbox).where(eq(outbox.to, 'new.person@lab.example')).orderBy(desc(outbox.createdAt))
      expect(row.subject).toBe('You are invited to Tiller')
      expect(row.text).toContain(link)
      expect(row.labId).toBe(labId)
    } finally {
      await mail.close()
    }
  })
})

describe('with SMTP_URL: real delivery', () => {
  let server: SMTPServer
  let port: number
  const received: { to: string[]; raw: string }[] = []
  beforeAll(async () => {
    // A separate SMTP server stands in for the lab's mail relay.
    server = new SMTPServer({
      authOptional: true,
      disabledCommands: ['STARTTLS', 'AUTH'],
      logger: false,
      onData(stream, session, callback) {
        let raw = ''
        stream.on('data', (c: Buffer) => (raw += c.toString()))
        stream.on('end', () => {
          received.push({ to: session.envelope.rcptTo.map((r) => r.address), raw })
          callback()
        })
      },
    })
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', () => resolve()))
    port = (server.server.address() as AddressInfo).port
  })
  afterAll(async () => new Promise<void>((resolve) => server.close(() => resolve())))

  it('hands the message to the relay, starts no fake, and keeps a delivered copy', async () => {
    const mail = await createMailService(loadConfig({ ...baseEnv, SMTP_URL: `smtp://127.0.0.1:${port}` }), handle.db)
    try {
      expect(mail.fakeSmtpPort).toBeNull()
      await mail.mailer.send({ to: 'relay@lab.example', subject: 'Relayed', text: 'Through the relay', labId })
      expect(received).toHaveLength(1)
      expect(received[0].to).toEqual(['relay@lab.example'])
      expect(received[0].raw).toMatch(/Subject: Relayed/)
      expect(received[0].raw).toMatch(/X-Tiller-Lab: /i)
      const [row] = await handle.db.select().from(outbox).where(eq(outbox.to, 'relay@lab.example'))
      expect(row).toMatchObject({ delivered: true, subject: 'Relayed', labId })
    } finally {
      await mail.close()
    }
  })
})
