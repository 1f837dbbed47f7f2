import { spawn, spawnSync, type ChildProcess } from 'node:child_process'
import { readFileSync } from 'node:fs'
import { expect, test, type Page } from '@playwright/test'
import { DEMO_ACCOUNTS } from '../../app/server/demo.server'

// The supervisor's review flow and the developer's API, against the production build on a data
// directory that holds finished sessions (simulated runs, decoders, a decision log and the run
// summary e-mail; tests/fixtures/review/seed-e2e.ts). This file starts its own server on the
// port after TILLER_E2E_PORT, because the shared server's demo data has no finished session.
const port = Number(process.env.TILLER_E2E_PORT ?? 4400) + 1
const base = `http://127.0.0.1:${port}`
const dir = `tmp/e2e-review-${port}`
let server: ChildProcess | null = null
let ids: {
  first: { sessionId: string; participantId: string; feedbackRunId: string; decoderId: string; otherDecoderId: string }
  second: { sessionId: string; feedbackRunId: string }
  other: { sessionId: string; participantId: string }
}

test.describe.configure({ mode: 'serial' })

test.beforeAll(async () => {
  test.setTimeout(240_000)
  const env = { ...process.env, NODE_ENV: 'production', PORT: String(port), TILLER_DATA_DIR: dir, SESSION_SECRET: 'e2e-review-secret-e2e-review-secret-42', PUBLIC_URL: base }
  const seeded = spawnSync('npx', ['tsx', 'tests/fixtures/review/seed-e2e.ts', dir, `${dir}.json`], { env, encoding: 'utf8', timeout: 200_000 })
  if (seeded.status !== 0) throw new Error(`seeding failed: ${seeded.stderr}`)
  ids = JSON.parse(readFileSync(`${dir}.json`, 'utf8'))
  server = spawn('npx', ['tsx', 'server.ts'], { env, stdio: 'ignore', detached: true })
  for (let i = 0; i < 120; i++) {
    const ok = await fetch(`${base}/healthz`).then((r) => r.ok).catch(() => false)
    if (ok) return
    await new Promise((r) => setTimeout(r, 500))
  }
  throw new Error('review test server did not start')
})

test.afterAll(() => {
  if (server?.pid) process.kill(-server.pid, 'SIGTERM')
})

async function signIn(page: Page, role: 'supervisor' | 'operator' | 'developer' | 'participant') {
  const account = DEMO_ACCOUNTS.find((a) => a.role === role)!
  await page.goto(`${base}/sign-in`)
  await page.getByLabel('E-mail').fill(account.email)
  await page.getByLabel('Password').fill(account.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await expect(page).toHaveURL(role === 'participant' ? /\/me$/ : /\/home$/)
}

test('a supervisor finds a session, reviews, replays, signs off, exports and has its e-mail', async ({ page }) => {
  test.setTimeout(120_000)
  await signIn(page, 'supervisor')
  await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Review' }).click()
  await expect(page.getByRole('status').filter({ hasText: 'of 3 sessions' })).toBeVisible()

  // Filter in the browser: the table refetches through the API and the URL keeps the filter.
  await page.getByLabel('Participant').selectOption({ label: 'HS-014' })
  await expect(page).toHaveURL(new RegExp(`participant=${ids.first.participantId}`))
  await expect(page.getByRole('status').filter({ hasText: 'of 2 sessions' })).toBeVisible()
  await page.getByRole('button', { name: /Created/ }).click()
  await expect(page).toHaveURL(/dir=asc/)
  await page.reload()
  await expect(page.getByLabel('Participant')).toHaveValue(ids.first.participantId)
  await page.getByRole('link', { name: /Review session of HS-014, 3 Nov 2026/ }).click()

  // Review: figures, timeline, confusion matrix.
  await expect(page.getByRole('heading', { name: 'Session of HS-014' })).toBeVisible()
  await expect(page.getByText("Cohen's kappa").first()).toBeVisible()
  await expect(page.locator('.uplot').first()).toBeVisible()
  await expect(page.getByRole('table', { name: /Confusion matrix/ }).first()).toBeVisible()

  // Replay with the live decoder reproduces the log; another decoder gives the comparison.
  await page.getByLabel('Run', { exact: true }).selectOption({ label: 'Run 2 (feedback)' })
  await page.getByLabel('Decoder', { exact: true }).selectOption(ids.first.decoderId)
  await page.getByRole('button', { name: 'Replay' }).click()
  await expect(page.getByText(/reproduces the live log exactly/)).toBeVisible({ timeout: 30_000 })
  await page.getByLabel('Decoder', { exact: true }).selectOption(ids.first.otherDecoderId)
  await page.getByRole('button', { name: 'Replay' }).click()
  await expect(page.getByText(/Same decided class as live in \d+ of \d+ decisions/)).toBeVisible({ timeout: 30_000 })
  await expect(page.getByRole('group', { name: 'Trials side by side' }).or(page.getByText('Trials side by side'))).toBeVisible()

  // Sign-off: a flag needs a reason; then reviewed with a comment locks the record.
  await page.getByLabel('Flagged').check()
  await page.getByRole('button', { name: 'Sign off and lock' }).click()
  await expect(page.getByText('Say why the session is flagged')).toBeVisible()
  await page.getByLabel('Reviewed').check()
  await page.getByLabel('Comment').fill('Protocol followed; decoder adequate.')
  await page.getByRole('button', { name: 'Sign off and lock' }).click()
  await expect(page.getByText(/reviewed by Maren Holt/)).toBeVisible()
  await page.getByLabel('Add a correction').fill('Trial 4: participant reported a sneeze.')
  await page.getByRole('button', { name: 'Add', exact: true }).click()
  await expect(page.getByText('correction', { exact: true })).toBeVisible()

  // Export the feedback run as EDF+.
  const download = page.waitForEvent('download')
  await page.getByRole('link', { name: 'Recording (EDF+)' }).nth(1).click()
  const file = await download
  expect(file.suggestedFilename()).toMatch(/^run-2-.*-recording\.edf$/)

  // Printable report and the decoder review with scalp maps.
  await page.getByRole('link', { name: 'Printable report' }).click()
  await expect(page.getByRole('heading', { name: /Session report · HS-014/ })).toBeVisible()
  await expect(page.getByText(/Sign-off: reviewed/)).toBeVisible()
  await page.goto(`${base}/review/decoders/${ids.first.decoderId}`)
  await expect(page.getByRole('heading', { name: 'Patterns' })).toBeVisible()
  await expect(page.locator('canvas').first()).toBeVisible()

  // The run summary e-mail is in the outbox.
  await page.goto(`${base}/outbox`)
  await expect(page.getByText(/Run 2 \(feedback\) of HS-014 completed/).first()).toBeVisible()
})

test('an operator can review but not sign off; a participant sees only their own progress', async ({ page }) => {
  await signIn(page, 'operator')
  await page.goto(`${base}/review/sessions/${ids.second.sessionId}`)
  await expect(page.getByText('Only a supervisor can sign off a session.')).toBeVisible()
  await expect(page.getByRole('button', { name: 'Sign off and lock' })).toHaveCount(0)
  await page.context().clearCookies()

  await signIn(page, 'participant')
  await page.goto(`${base}/review/participants/${ids.first.participantId}`)
  await expect(page.getByRole('heading', { name: 'Your progress' })).toBeVisible()
  const other = await page.goto(`${base}/review/participants/${ids.other.participantId}`)
  expect(other?.status()).toBe(404)
  const review = await page.goto(`${base}/review/sessions/${ids.first.sessionId}`)
  expect(review?.status()).toBe(403)
})

test('a developer pulls the same data through the API with a token', async ({ page, request }) => {
  await signIn(page, 'developer')
  await page.goto(`${base}/api-tokens`)
  await page.getByLabel('Token name').fill('review e2e')
  await page.getByRole('button', { name: 'Create token' }).click()
  const token = await page.locator('#new-token').inputValue()
  expect(token.length).toBeGreaterThan(20)
  const auth = { Authorization: `Bearer ${token}` }

  const list = await request.get(`${base}/api/v1/sessions?participant=${ids.first.participantId}&signoff=reviewed`, { headers: auth })
  expect(list.status()).toBe(200)
  const body = await list.json()
  expect(body.rows.map((r: { id: string }) => r.id)).toEqual([ids.first.sessionId])

  const session = await (await request.get(`${base}/api/v1/sessions/${ids.first.sessionId}`, { headers: auth })).json()
  expect(session.signoff.state).toBe('reviewed')
  const ndjson = await request.get(`${base}/api/v1/runs/${ids.first.feedbackRunId}/decisions.ndjson`, { headers: auth })
  const lines = (await ndjson.text()).trim().split('\n')
  expect(lines.length).toBeGreaterThan(1000)
  const recording = await request.get(`${base}/api/v1/runs/${ids.first.feedbackRunId}/recording?format=edf`, { headers: auth })
  expect(recording.status()).toBe(200)
  expect((await recording.body()).subarray(0, 8).toString()).toBe('0       ')
  expect((await request.get(`${base}/api/v1/sessions`, { headers: { Authorization: 'Bearer tapi_wrong' } })).status()).toBe(401)
})

test('a supervisor imports an earlier EDF+ recording through the channel matching step', async ({ page }) => {
  await signIn(page, 'supervisor')
  await page.goto(`${base}/uploads`)
  await page.getByLabel('Participant').selectOption({ label: 'HS-022' })
  await page.getByLabel(/Protocol/).selectOption({ index: 1 })
  await page.getByLabel('Montage').selectOption({ label: 'sensorimotor 16 · 16 channels' })
  await page.getByLabel(/Recording file/).setInputFiles('tests/fixtures/review/upload.edf')
  await page.getByLabel(/Cue labels/).fill('T1=left, T2=right')
  await page.getByRole('button', { name: 'Import' }).click()
  await expect(page.getByText(/Match the montage/)).toBeVisible()
  await page.getByLabel('FC4', { exact: true }).selectOption('Ch8')
  await page.getByRole('button', { name: 'Import with this matching' }).click()
  await expect(page.getByText(/Imported: 40 cued trials, 8 channels/)).toBeVisible({ timeout: 30_000 })
  await page.getByRole('link', { name: 'Open the imported session' }).click()
  await expect(page.getByText(/Calibration run: 40 cued trials \(20 left, 20 right\)/)).toBeVisible()
})

