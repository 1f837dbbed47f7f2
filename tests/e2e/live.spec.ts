import { cpus, loadavg } from 'node:os'
import { expect, test, type Browser, type Page } from '@playwright/test'
import { DEMO_ACCOUNTS } from '../../app/server/demo.server'

// A complete session as a new operator would run it, with the bench's simulated participant
// attached and the participant following on the feedback view in a second browser context:
// signal check, a short calibration run, training and choice of decoder, two feedback runs,
// an annotation, stop, end. Then every decision made is in the log.
//
// Also measured here: the console's frame rate with 64 channels streaming (requestAnimationFrame
// callbacks counted over a few seconds), and the feedback view's screen changes, which must
// never exceed three in any one second (WCAG 2.3.1, Three Flashes or Below Threshold).

test.describe.configure({ timeout: 240_000 })

const account = (role: string) => DEMO_ACCOUNTS.find((a) => a.role === role)!

async function signedIn(browser: Browser, role: string): Promise<Page> {
  const context = await browser.newContext({ viewport: { width: 1440, height: 900 } })
  const page = await context.newPage()
  const a = account(role)
  await page.goto('/sign-in')
  await page.getByLabel('E-mail').fill(a.email)
  await page.getByLabel('Password').fill(a.password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'))
  return page
}

/** A short protocol for rehearsal: ~3 s per trial (fixation 0.5, cue 0.5, imagery 1.5, rest 0.5 + jitter). */
async function createShortProtocol(browser: Browser): Promise<string> {
  const supervisor = await signedIn(browser, 'supervisor')
  const name = `Rehearsal, short trials ${Date.now()}`
  const fields: [string, string][] = [
    ['intent', 'save'], ['name', name], ['classes', 'left'], ['classes', 'right'],
    ['fixationSeconds', '0.5'], ['cueSeconds', '0.5'], ['imagerySeconds', '1.5'], ['restSeconds', '0.5'], ['restJitterSeconds', '0.2'],
    ['trialsPerClass', '5'], ['bandLowHz', '8'], ['bandHighHz', '30'],
    ['windowStartSeconds', '0.5'], ['windowEndSeconds', '2'], ['decodingWindowSeconds', '1'],
  ]
  const res = await supervisor.request.post('/protocols/new', {
    headers: { 'Content-Type': 'application/x-www-form-urlencoded' },
    data: new URLSearchParams(fields).toString(),
    maxRedirects: 0,
  })
  expect([302, 303, 200]).toContain(res.status())
  await supervisor.context().close()
  return name
}

/** requestAnimationFrame callbacks per second, counted in the page over `ms`. */
async function measureFps(page: Page, ms: number): Promise<number> {
  return page.evaluate(
    (duration) =>
      new Promise<number>((resolve) => {
        let frames = 0
        const start = performance.now()
        const tick = (now: number) => {
          frames++
          if (now - start < duration) requestAnimationFrame(tick)
          else resolve((frames * 1000) / (now - start))
        }
        requestAnimationFrame(tick)
      }),
    ms,
  )
}

/** Screens kept with the test's output, for a person to look at. */
async function keep(page: Page, name: string) {
  await page.screenshot({ path: test.info().outputPath(`${name}.png`), fullPage: true })
}

async function waitForRunEnd(console: Page, timeoutMs: number) {
  await expect(console.getByTestId('console-state')).toHaveText(/stopped/i, { timeout: timeoutMs })
}

test('an operator runs a complete session with the simulator; the participant follows; every decision is logged', async ({ browser }) => {
  const protocolName = await createShortProtocol(browser)

  // --- prepare -------------------------------------------------------------------------
  const operator = await signedIn(browser, 'operator')
  await operator.goto('/sessions/new')
  await operator.getByLabel('Participant', { exact: true }).selectOption({ label: 'HS-014 · consent given' })
  await operator.getByLabel('Montage', { exact: true }).selectOption({ label: '10-10 (64) · 64 channels · ref FCz' })
  await operator.getByLabel('Protocol', { exact: true }).selectOption({ label: protocolName })
  await operator.getByLabel(/Notes/).fill('End-to-end rehearsal with the bench simulator.')
  await operator.getByLabel(/approved protocol/).check()
  await operator.getByRole('button', { name: 'Prepare session' }).click()
  await operator.waitForURL(/\/sessions\/[0-9a-f-]{36}$/)
  const sessionId = operator.url().split('/').pop()!

  // The participant's second screen, through a feedback link (not signed in).
  await operator.getByRole('button', { name: 'Make a link' }).click()
  const link = await operator.getByLabel('Feedback link').inputValue()
  expect(link).toContain(`/feedback/${sessionId}?token=tfbk_`)
  const participantContext = await browser.newContext({ viewport: { width: 1280, height: 800 } })
  const participant = await participantContext.newPage()
  await participant.goto(new URL(link).pathname + new URL(link).search)
  await expect(participant.getByText('Welcome')).toBeVisible()
  // The computer's own setting turns reduced motion on and says so.
  await participant.emulateMedia({ reducedMotion: 'reduce' })
  await expect(participant.getByLabel(/Reduced motion \(set by this computer\)/)).toBeChecked()
  await participant.emulateMedia({ reducedMotion: 'no-preference' })
  await expect(participant.getByLabel(/Reduced motion/)).not.toBeChecked()
  // Record every change of screen with its time, for the flash check at the end.
  await participant.evaluate(() => {
    const view = document.querySelector('[data-testid=feedback-view]')!
    const w = window as unknown as { screenChanges: { at: number; key: string }[] }
    w.screenChanges = []
    new MutationObserver(() => w.screenChanges.push({ at: performance.now(), key: view.getAttribute('data-screen') ?? '' })).observe(view, { attributes: true, attributeFilter: ['data-screen'] })
  })

  // --- the developer attaches a simulated participant ----------------------------------------
  const developer = await signedIn(browser, 'developer')
  await developer.goto(`/bench?session=${sessionId}`)
  await developer.getByLabel('Sample rate').selectOption('250')
  await developer.getByLabel('Skill (0–1)').fill('0.95')
  await developer.getByLabel('Seed (optional)').fill('2026')
  await developer.getByRole('button', { name: 'Start device' }).click()
  await expect(developer.getByText('Simulated device started.')).toBeVisible()

  // --- signal check ----------------------------------------------------------------------
  await operator.goto(`/sessions/${sessionId}/console`)
  await expect(operator.getByTestId('console-state')).toHaveText(/device connected/i, { timeout: 20_000 })
  await expect(operator.getByTestId('quality-summary')).not.toHaveText(/Waiting/, { timeout: 15_000 })
  await operator.getByRole('radio', { name: 'Raw' }).click()
  await operator.getByLabel('Spacing').selectOption('100')
  await operator.getByRole('radio', { name: /Band-passed/ }).click()
  await operator.waitForTimeout(1500)
  const fpsIdle = await measureFps(operator, 3000)
  await keep(operator, 'console-device-connected')

  // --- calibration run (5 per class) --------------------------------------------------------
  await operator.getByLabel('Trials per class').fill('5')
  await operator.getByRole('button', { name: 'Start calibration' }).click()
  await expect(operator.getByTestId('console-state')).toHaveText(/recording/i)
  await expect(participant.locator('[data-glyph]')).toBeVisible({ timeout: 10_000 })
  await keep(participant, 'feedback-cue')
  // 64 channels scrolling during a recording run: the frame rate the operator gets.
  const fpsRecording = await measureFps(operator, 5000)
  test.info().annotations.push({ type: 'console fps (64 channels)', description: `idle ${fpsIdle.toFixed(1)}, recording ${fpsRecording.toFixed(1)}` })
  console.log(`console frame rate with 64 channels: device connected ${fpsIdle.toFixed(1)} fps, recording ${fpsRecording.toFixed(1)} fps (load average ${loadavg()[0].toFixed(1)} on ${cpus().length} cores)`)
  // On a machine that is not shared the console holds ~60 fps (rAF is capped at the display
  // rate); when other jobs keep every core busy the renderer gets less CPU, so the floor drops.
  const busy = loadavg()[0] / cpus().length > 1.5
  expect(fpsRecording).toBeGreaterThanOrEqual(busy ? 25 : 50)
  await keep(operator, 'console-recording')
  await waitForRunEnd(operator, 60_000)
  await expect(participant.getByText('Run finished')).toBeVisible({ timeout: 5_000 })

  // --- training and choice of decoder -------------------------------------------------------
  await operator.getByRole('link', { name: /Session page/ }).click()
  await expect(operator.getByTestId('runs-table').locator('tr[data-run-kind=calibration]')).toHaveCount(1)
  await operator.getByLabel(/Spatial filter to train/).selectOption('csp')
  await operator.getByRole('button', { name: 'Train decoder' }).click()
  const decoder = operator.getByTestId('decoder').first()
  await expect(decoder).toBeVisible({ timeout: 60_000 })
  await expect(decoder).toContainText('CV accuracy')
  await expect(decoder.getByRole('img', { name: /strongest at/ }).first()).toBeVisible()
  await expect(decoder.getByRole('table')).toContainText('CSP')
  await keep(operator, 'session-decoder')
  await decoder.getByRole('button', { name: 'Activate' }).click()
  await expect(decoder).toContainText('active', { timeout: 10_000 })

  // --- two feedback runs, an annotation, stop -----------------------------------------------
  await operator.getByRole('link', { name: 'Open console' }).click()
  await expect(operator.getByTestId('console-state')).toHaveText(/device connected|stopped/i, { timeout: 20_000 })
  await operator.getByLabel('Trials per class').fill('2')
  await operator.getByRole('button', { name: 'Start feedback' }).click()
  await expect(operator.getByTestId('console-state')).toHaveText(/decoding/i)
  await expect(participant.getByTestId('feedback-track')).toBeVisible({ timeout: 10_000 })
  await participant.waitForTimeout(700)
  await keep(participant, 'feedback-imagery')
  await keep(operator, 'console-decoding')
  await operator.getByRole('textbox', { name: 'Annotation' }).fill('participant reports the left cue is easier')
  await operator.getByRole('button', { name: 'Add' }).click()
  await expect(operator.getByTestId('annotations')).toContainText('left cue is easier')
  await waitForRunEnd(operator, 40_000)
  await expect(participant.getByTestId('run-summary')).toContainText(/of 4 trials reached the target/)
  await keep(participant, 'feedback-summary')

  await operator.getByRole('button', { name: 'Start feedback' }).click()
  await expect(operator.getByTestId('console-state')).toHaveText(/decoding/i)
  await operator.getByRole('button', { name: 'Pause' }).click()
  await expect(operator.getByTestId('console-state')).toHaveText(/paused/i)
  await expect(participant.getByText('Break')).toBeVisible()
  await keep(participant, 'feedback-break')
  await keep(operator, 'console-paused')
  await operator.getByRole('button', { name: 'Resume' }).click()
  await expect(operator.getByTestId('console-state')).toHaveText(/decoding/i)
  // Reduced motion, chosen on the participant's screen: the marker no longer glides, it steps
  // to the latest value at most four times a second.
  await participant.getByLabel(/Reduced motion/).check()
  await expect(participant.getByTestId('feedback-marker')).toBeVisible({ timeout: 10_000 })
  const markerMoves = await participant.evaluate(
    () =>
      new Promise<number>((resolve) => {
        const marker = document.querySelector('[data-testid=feedback-marker]')!
        let moves = 0
        const observer = new MutationObserver(() => moves++)
        observer.observe(marker, { attributes: true, attributeFilter: ['data-position'] })
        setTimeout(() => (observer.disconnect(), resolve(moves)), 1000)
      }),
  )
  expect(markerMoves).toBeLessThanOrEqual(5)
  await operator.waitForTimeout(1500)
  await operator.getByRole('button', { name: 'Stop run' }).click()
  await waitForRunEnd(operator, 10_000)

  // --- every decision is in the log -----------------------------------------------------------
  // Figures arrive once a second: wait until made equals logged and holds still across reads.
  const figure = operator.locator('[data-figure="Decisions made · logged"]')
  const readFigure = async () => ((await figure.textContent()) ?? '').split('·').map((s) => Number(s.replace(/[^0-9]/g, '')))
  let previous = -1
  await expect
    .poll(
      async () => {
        const [made, logged] = await readFigure()
        const stable = made > 0 && made === logged && made === previous
        previous = made === logged ? made : -1
        return stable
      },
      { timeout: 20_000, intervals: [1500] },
    )
    .toBe(true)
  const [made] = await readFigure()

  operator.once('dialog', (d) => void d.accept())
  await operator.getByRole('button', { name: 'End session' }).click()
  await expect(operator.getByText('The session has ended.')).toBeVisible({ timeout: 10_000 })

  await operator.goto(`/sessions/${sessionId}`)
  const rows = operator.getByTestId('runs-table').locator('tbody tr')
  await expect(rows).toHaveCount(3)
  const counts = await rows.evaluateAll((trs) => trs.map((tr) => ({ kind: tr.getAttribute('data-run-kind'), decisions: Number(tr.getAttribute('data-decisions')) })))
  const logged = counts.reduce((sum, r) => sum + r.decisions, 0)
  expect(counts.filter((r) => r.kind === 'feedback')).toHaveLength(2)
  for (const r of counts.filter((r) => r.kind === 'feedback')) expect(r.decisions).toBeGreaterThan(0)
  expect(logged).toBe(made)
  await expect(operator.getByText('participant reports the left cue is easier')).toBeVisible()
  await keep(operator, 'session-ended')

  // --- no more than three screen changes in any second on the participant's view (WCAG 2.3.1) ---
  const changes = await participant.evaluate(() => (window as unknown as { screenChanges: { at: number }[] }).screenChanges.map((c) => c.at))
  expect(changes.length).toBeGreaterThan(10)
  let worst = 0
  for (let i = 0, j = 0; i < changes.length; i++) {
    while (changes[i] - changes[j] >= 1000) j++
    worst = Math.max(worst, i - j + 1)
  }
  expect(worst).toBeLessThanOrEqual(3)

  // --- each ended run sent the supervisors its summary e-mail (local outbox) ---
  const reviewer = await signedIn(browser, 'supervisor')
  await reviewer.goto('/outbox')
  await expect(reviewer.getByText(/HS-\d+/).first()).toBeVisible()
  expect(await reviewer.locator("body").innerText()).toMatch(/\(feedback\) of HS-/)

  await developer.goto(`/bench?session=${sessionId}`)
  await keep(developer, 'bench')
  if (await developer.getByRole('button', { name: 'Stop device' }).isVisible()) await developer.getByRole('button', { name: 'Stop device' }).click()
})
