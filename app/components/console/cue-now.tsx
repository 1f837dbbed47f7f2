// What the participant is being asked to do right now, as the operator sees it.
import { useConsole } from './console-context'
import { classColour } from './traces'

export function CueNow({ classes }: { classes: string[] }) {
  const cue = useConsole((s) => s.cue)
  const run = useConsole((s) => s.run)
  const active = run && (run.status === 'running' || run.status === 'paused')
  return (
    <section aria-label="Current cue" className="panel flex items-center gap-3 p-3" data-testid="cue-now">
      <span className="inline-block h-8 w-2 rounded" style={{ background: active && cue ? classColour(classes, cue.phase === 'cue' || cue.phase === 'imagery' ? cue.label : null) : '#27363c' }} aria-hidden="true" />
      <div className="text-sm">
        {active && cue ? (
          <>
            <span className="font-bold">Trial {cue.trial + 1}</span> · {cue.phase}
            {cue.phase === 'cue' || cue.phase === 'imagery' ? (
              <>
                {' '}
                · <span className="font-bold">{cue.label}</span>
              </>
            ) : null}
          </>
        ) : (
          <span className="text-haze">No run in progress.</span>
        )}
      </div>
    </section>
  )
}
