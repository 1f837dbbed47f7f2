import { useEffect, useState } from 'react'

/**
 * False during server rendering and before hydration. Forms show every field until then, so
 * they work without JavaScript; once hydrated they hide the fields that do not apply.
 */
export function useHydrated(): boolean {
  const [hydrated, setHydrated] = useState(false)
  useEffect(() => setHydrated(true), [])
  return hydrated
}
