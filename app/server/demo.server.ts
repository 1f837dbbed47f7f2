// Demo data: an invented lab with one account per role, two participants, montage presets and
// a two-class protocol. Seeded once; running it again changes nothing.
import { eq } from 'drizzle-orm'
import type { Database } from '~/db/client.server'
import { labs, montages, participants, protocols } from '~/db/schema'
import { montagePreset, presetName, type PresetCount } from '~/engine/montage'
import { createUser } from '~/server/people.server'
import type { Role } from '~/server/services'

export const DEMO_LAB = 'Harbourside Motor Learning Lab (demo)'

export const DEMO_ACCOUNTS: { role: Role; name: string; email: string; password: string; participantCode?: string }[] = [
  { role: 'supervisor', name: 'Maren Holt', email: 'maren.holt@harbourside.example', password: 'demo-supervisor-2026' },
  { role: 'operator', name: 'Tomas Reyes', email: 'tomas.reyes@harbourside.example', password: 'demo-operator-2026' },
  { role: 'developer', name: 'Priya Nair', email: 'priya.nair@harbourside.example', password: 'demo-developer-2026' },
  { role: 'participant', name: 'Participant HS-014', email: 'hs014@harbourside.example', password: 'demo-participant-2026', participantCode: 'HS-014' },
]

export async function seedDemo(db: Database): Promise<{ created: boolean; labId: string }> {
  const [existing] = await db.select().from(labs).where(eq(labs.name, DEMO_LAB))
  if (existing) return { created: false, labId: existing.id }
  const [lab] = await db.insert(labs).values({ name: DEMO_LAB }).returning()
  const [p1, p2] = await db
    .insert(participants)
    .values([
      { labId: lab.id, code: 'HS-014', yearOfBirth: 1991, handedness: 'right', consentDate: '2026-10-02', consentStatus: 'given', notes: 'Prefers sessions in the morning. Glasses off during runs.' },
      { labId: lab.id, code: 'HS-022', yearOfBirth: 1978, handedness: 'left', consentDate: '2026-10-19', consentStatus: 'given', notes: 'Second visit planned after the first feedback session.' },
    ])
    .returning()
  const presets: PresetCount[] = [16, 21, 64]
  await db.insert(montages).values(
    presets.map((n) => ({
      labId: lab.id,
      name: presetName(n),
      channels: montagePreset(n).map(({ name, x, y, z }) => ({ name, x, y, z })),
      reference: n === 64 ? 'FCz' : 'right earlobe',
      ground: 'AFz',
    })),
  )
  await db.insert(protocols).values({
    labId: lab.id,
    name: 'Left hand vs right hand (two classes)',
    classes: ['left', 'right'],
    trialsPerClass: 20,
  })
  for (const account of DEMO_ACCOUNTS) {
    await createUser(db, {
      labId: lab.id,
      email: account.email,
      name: account.name,
      role: account.role,
      password: account.password,
      participantId: account.participantCode === 'HS-014' ? p1.id : null,
    })
  }
  void p2
  return { created: true, labId: lab.id }
}
