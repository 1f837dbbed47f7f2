import { expect, test, type Page } from '@playwright/test'
import { DEMO_ACCOUNTS } from '../../app/server/demo.server'

const account = (role: string) => DEMO_ACCOUNTS.find((a) => a.role === role)!

async function signIn(page: Page, email: string, password: string) {
  await page.goto('/sign-in')
  await page.getByLabel('E-mail').fill(email)
  await page.getByLabel('Password').fill(password)
  await page.getByRole('button', { name: 'Sign in' }).click()
  await expect(page).not.toHaveURL(/\/sign-in/)
}

test('an operator adds a participant, fixing an inline error first, and finds it by search', async ({ page }) => {
  const operator = account('operator')
  await signIn(page, operator.email, operator.password)
  await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Participants' }).click()
  await page.getByRole('link', { name: 'New participant' }).click()

  await page.getByLabel('Pseudonymous code').fill('Ada Berg')
  await page.getByLabel('Year of birth (optional)').fill('1993')
  await page.getByLabel('Handedness').selectOption('left')
  await page.getByLabel('Consent status').selectOption('given')
  await page.getByRole('button', { name: 'Add participant' }).click()
  // A name is refused as a code, and a given consent needs its date; the typed values stay.
  await expect(page.locator('#code-error')).toContainText('never a name')
  await expect(page.locator('#consentDate-error')).toContainText('Give the date consent was given')
  await expect(page.getByLabel('Pseudonymous code')).toHaveAttribute('aria-invalid', 'true')
  await expect(page.getByLabel('Year of birth (optional)')).toHaveValue('1993')

  await page.getByLabel('Pseudonymous code').fill('HS-077')
  await page.getByLabel('Consent date').fill('2026-11-20')
  await page.getByRole('button', { name: 'Add participant' }).click()
  await expect(page).toHaveURL(/\/participants\?saved=HS-077/)
  await expect(page.getByRole('status')).toContainText('Saved participant HS-077')
  const row = page.getByRole('row', { name: /HS-077/ })
  await expect(row).toContainText('1993')
  await expect(row).toContainText('left')

  await page.getByLabel('Search codes and notes').fill('077')
  await page.getByRole('button', { name: 'Search' }).click()
  await expect(page.getByRole('row')).toHaveCount(2) // header + HS-077
  await expect(page.getByText('1 of 3 participants match')).toBeVisible()
})

test('a supervisor invites a person, follows the link from the outbox, and the person signs in', async ({ page }) => {
  const supervisor = account('supervisor')
  await signIn(page, supervisor.email, supervisor.password)
  await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'People' }).click()
  await page.getByRole('link', { name: 'Invite someone' }).click()
  await page.getByLabel('E-mail').fill('jonas.weir@harbourside.example')
  await page.getByLabel('Name').fill('Jonas Weir')
  await page.getByLabel('Role').selectOption('operator')
  await page.getByRole('button', { name: 'Send invitation' }).click()
  await expect(page.getByRole('status')).toContainText('Invitation sent to jonas.weir@harbourside.example')
  await expect(page.getByRole('row', { name: /Jonas Weir/ })).toContainText('Invited, no password yet')

  await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Outbox' }).click()
  const message = page.getByRole('article').filter({ hasText: 'jonas.weir@harbourside.example' }).first()
  await expect(message).toContainText('You are invited to Tiller')
  const link = message.getByRole('link', { name: /\/invite\// })
  const href = await link.getAttribute('href')
  expect(href).toMatch(/\/invite\/inv_/)

  // The invited person opens the link in their own browser, signed out.
  await page.getByRole('button', { name: 'Sign out' }).click()
  await expect(page).toHaveURL(/\/sign-in/)
  await page.goto(href!)
  await expect(page.getByRole('heading', { name: 'Welcome to Tiller' })).toBeVisible()
  await page.getByLabel('New password').fill('short')
  await page.getByLabel('The same password again').fill('short')
  await page.getByRole('button', { name: 'Set password' }).click()
  await expect(page.getByText('Use at least 10 characters')).toBeVisible()
  await page.getByLabel('New password').fill('north quay lantern')
  await page.getByLabel('The same password again').fill('north quay lantern')
  await page.getByRole('button', { name: 'Set password' }).click()
  await expect(page.getByRole('status')).toContainText('Your password is set')
  await page.getByRole('link', { name: 'Go to sign-in' }).click()

  await signIn(page, 'jonas.weir@harbourside.example', 'north quay lantern')
  await expect(page).toHaveURL(/\/home$/)
  await expect(page.getByText('Jonas Weir')).toBeVisible()

  // The link worked once.
  await page.getByRole('button', { name: 'Sign out' }).click()
  await page.goto(href!)
  await expect(page.getByRole('heading', { name: 'This link no longer works' })).toBeVisible()
})
