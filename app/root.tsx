import { isRouteErrorResponse, Links, Meta, Outlet, Scripts, ScrollRestoration, useRouteLoaderData } from 'react-router'
import type { Route } from './+types/root'
import { AppShell } from '~/components/app-shell'
import { getUser } from '~/server/auth.server'
import './app.css'

export const links: Route.LinksFunction = () => [{ rel: 'icon', href: '/favicon.ico' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  const user = await getUser(request, context)
  return { user, nonce: context.cspNonce }
}

export function Layout({ children }: { children: React.ReactNode }) {
  const data = useRouteLoaderData<typeof loader>('root')
  const nonce = data?.nonce || undefined
  return (
    <html lang="en">
      <head>
        <meta charSet="utf-8" />
        <meta name="viewport" content="width=device-width, initial-scale=1" />
        <Meta />
        <Links nonce={nonce} />
      </head>
      <body className="min-h-screen bg-ink-950 text-fog antialiased">
        {children}
        <ScrollRestoration nonce={nonce} />
        <Scripts nonce={nonce} />
      </body>
    </html>
  )
}

export default function App({ loaderData }: Route.ComponentProps) {
  return (
    <AppShell user={loaderData.user}>
      <Outlet />
    </AppShell>
  )
}

export function ErrorBoundary({ error }: Route.ErrorBoundaryProps) {
  let title = 'Something went wrong'
  let detail = 'Tiller hit an unexpected error. The action was not completed; try again, and tell your lab developer if it repeats.'
  if (isRouteErrorResponse(error)) {
    title = error.status === 404 ? 'Not found' : error.status === 403 ? 'Not allowed' : `Error ${error.status}`
    const message = typeof error.data === 'object' && error.data && 'message' in error.data ? String(error.data.message) : typeof error.data === 'string' ? error.data : ''
    detail = message || (error.status === 404 ? 'There is nothing at this address, or it belongs to another lab.' : error.statusText)
  } else if (import.meta.env.DEV && error instanceof Error) {
    detail = error.message
  }
  return (
    <main className="mx-auto max-w-xl p-10">
      <h1 className="text-2xl font-bold text-brass">{title}</h1>
      <p className="mt-3 text-haze">{detail}</p>
      <p className="mt-6">
        <a className="underline" href="/">
          Back to your home page
        </a>
      </p>
    </main>
  )
}
