import { expect, test } from '@playwright/test'
import { DEMO_ACCOUNTS } from '../../app/server/demo.server'
import { NAV } from '../../app/components/app-shell'

// Each role signs in, lands on its own home page and sees only its own navigation.
for (const account of DEMO_ACCOUNTS) {
  test(`${account.role} signs in and sees only their own navigation`, async ({ page }) => {
    await page.goto('/')
    await expect(page).toHaveURL(/\/sign-in/)
    await page.getByLabel('E-mail').fill(account.email)
    await page.getByLabel('Password').fill(account.password)
    await page.getByRole('button', { name: 'Sign in' }).click()
    const home = account.role === 'participant' ? '/me' : '/home'
    await expect(page).toHaveURL(new RegExp(`${home}$`))
    const nav = page.getByRole('navigation', { name: 'Main' })
    const labels = await nav.getByRole('link').allTextContents()
    expect(labels).toEqual(NAV[account.role].map((n) => n.label))
    await expect(page.getByRole('link', { name: 'Cautions' })).toBeVisible()
  })
}

test('a wrong password shows a clear message and no session', async ({ page }) => {
  await page.goto('/sign-in')
  await page.getByLabel('E-mail').fill(DEMO_ACCOUNTS[1].email)
  await page.getByLabel('Password').fill('not-the-password')
  await page.getByRole('button', { name: 'Sign in' }).click()
  await expect(page.getByRole('alert')).toContainText('do not match')
  await page.goto('/home')
  await expect(page).toHaveURL(/\/sign-in/)
})
