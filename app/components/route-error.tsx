import { isRouteErrorResponse, Link, useRouteError } from 'react-router'

/** Error boundary body for any route: a readable message, never a stack trace in production. */
export function RouteError() {
  const error = useRouteError()
  let title = 'This page could not be shown'
  let detail = 'An unexpected error stopped this page. Nothing you entered was saved unless the page said so.'
  if (isRouteErrorResponse(error)) {
    title = error.status === 404 ? 'Not found' : error.status === 403 ? 'Not allowed' : `Error ${error.status}`
    const data = error.data as unknown
    const message = typeof data === 'object' && data && 'message' in data ? String((data as { message: unknown }).message) : typeof data === 'string' ? data : ''
    detail = message || error.statusText
  } else if (import.meta.env.DEV && error instanceof Error) {
    detail = error.message
  }
  return (
    <div role="alert" className="panel border-rust/60">
      <h2 className="text-lg font-bold text-rust">{title}</h2>
      <p className="mt-2 text-haze">{detail}</p>
      <Link to="/" className="mt-4 inline-block underline">
        Home
      </Link>
    </div>
  )
}
