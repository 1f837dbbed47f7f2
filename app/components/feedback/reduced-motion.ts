// Reduced motion: on when the computer asks for it (prefers-reduced-motion), or when the
// participant or operator ticks the box on the feedback view (remembered in this browser).
import { useCallback, useEffect, useState } from 'react'

const KEY = 'tiller.feedback.reducedMotion'

export function useReducedMotion(): { reducedMotion: boolean; forced: boolean; toggle: () => void } {
  const [system, setSystem] = useState(false)
  const [chosen, setChosen] = useState(false)
  useEffect(() => {
    const media = window.matchMedia('(prefers-reduced-motion: reduce)')
    setSystem(media.matches)
    const onChange = () => setSystem(media.matches)
    media.addEventListener('change', onChange)
    try {
      setChosen(window.localStorage.getItem(KEY) === '1')
    } catch {
      // storage may be off; the toggle still works for this page
    }
    return () => media.removeEventListener('change', onChange)
  }, [])
  const toggle = useCallback(() => {
    setChosen((c) => {
      try {
        window.localStorage.setItem(KEY, c ? '0' : '1')
      } catch {
        // ignore
      }
      return !c
    })
  }, [])
  return { reducedMotion: system || chosen, forced: system, toggle }
}
