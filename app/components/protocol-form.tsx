import { useState } from 'react'
import { Form, useNavigation } from 'react-router'
import { FormError, TextField } from '~/components/form-fields'
import { FieldError } from '~/components/page'
import type { FieldErrors } from '~/lib/forms'

export interface ProtocolValues {
  name: string
  classes: string[]
  fixationSeconds: string
  cueSeconds: string
  imagerySeconds: string
  restSeconds: string
  restJitterSeconds: string
  trialsPerClass: string
  bandLowHz: string
  bandHighHz: string
  windowStartSeconds: string
  windowEndSeconds: string
  decodingWindowSeconds: string
}

// Defaults: 8-30 Hz covers mu and beta over sensorimotor cortex (common practice); the
// 0.5-2.5 s training window skips the first reaction to the cue.
export const DEFAULT_PROTOCOL: ProtocolValues = {
  name: '',
  classes: ['left', 'right'],
  fixationSeconds: '2',
  cueSeconds: '1.25',
  imagerySeconds: '4',
  restSeconds: '2',
  restJitterSeconds: '1',
  trialsPerClass: '20',
  bandLowHz: '8',
  bandHighHz: '30',
  windowStartSeconds: '0.5',
  windowEndSeconds: '2.5',
  decodingWindowSeconds: '1',
}

/** Form values (strings) from a stored protocol or from a rejected submission. */
export function protocolValues(stored: Partial<Record<keyof ProtocolValues, unknown>>, submitted?: Record<string, string>): ProtocolValues {
  const out = { ...DEFAULT_PROTOCOL }
  for (const key of Object.keys(out) as (keyof ProtocolValues)[]) {
    const v = stored[key]
    if (key === 'classes') out.classes = Array.isArray(v) ? v.map(String) : out.classes
    else if (v !== undefined && v !== null) out[key] = String(v)
  }
  if (submitted) {
    for (const key of Object.keys(out) as (keyof ProtocolValues)[]) if (key !== 'classes' && key in submitted) out[key] = submitted[key]
  }
  return out
}

function runMinutes(v: ProtocolValues): string | null {
  const n = (k: keyof ProtocolValues) => Number(v[k])
  const trial = n('fixationSeconds') + n('cueSeconds') + n('imagerySeconds') + n('restSeconds')
  const trials = n('trialsPerClass') * v.classes.length
  if (![trial, trials, n('restJitterSeconds')].every(Number.isFinite) || trials <= 0) return null
  const lo = (trial * trials) / 60
  const hi = ((trial + n('restJitterSeconds')) * trials) / 60
  return `${trials} trials of ${trial.toFixed(2).replace(/\.?0+$/, '')}–${(trial + n('restJitterSeconds')).toFixed(2).replace(/\.?0+$/, '')} s: a run lasts about ${lo.toFixed(1)}–${hi.toFixed(1)} min.`
}

function NumberField(props: { name: keyof ProtocolValues; label: string; unit: string; values: ProtocolValues; errors?: FieldErrors; step?: string; hint?: string }) {
  return (
    <TextField
      name={props.name}
      label={`${props.label} (${props.unit})`}
      type="number"
      inputMode="decimal"
      step={props.step ?? '0.05'}
      defaultValue={props.values[props.name] as string}
      errors={props.errors}
      hint={props.hint}
    />
  )
}

export function ProtocolForm({
  values,
  errors,
  classes,
  readOnly = false,
  buttons,
}: {
  values: ProtocolValues
  errors?: FieldErrors
  classes: readonly { value: string; label: string }[]
  readOnly?: boolean
  buttons: { intent: 'save' | 'copy'; label: string; primary?: boolean; disabled?: boolean }[]
}) {
  const busy = useNavigation().state === 'submitting'
  const [live, setLive] = useState(values)
  function onChange(event: React.FormEvent<HTMLFormElement>) {
    const data = new FormData(event.currentTarget)
    const next = { ...live }
    for (const key of Object.keys(next) as (keyof ProtocolValues)[]) {
      if (key === 'classes') next.classes = data.getAll('classes').map(String)
      else next[key] = String(data.get(key) ?? '')
    }
    setLive(next)
  }
  const summary = runMinutes(live)
  return (
    <Form method="post" className="panel max-w-3xl" noValidate onChange={onChange}>
      <fieldset disabled={readOnly} className={readOnly ? 'space-y-6 [&_.field]:cursor-default [&_.field]:border-ink-800 [&_.field]:bg-ink-900' : 'space-y-6'}>
        <FormError errors={errors} />
        <TextField name="name" label="Name" defaultValue={values.name} errors={errors} placeholder="e.g. Left hand vs right hand" />
        <fieldset aria-describedby={errors?.classes ? 'classes-error' : undefined}>
          <legend className="label">Classes (cues the participant imagines)</legend>
          <div className="flex flex-wrap gap-x-6 gap-y-2">
            {classes.map((c) => (
              <label key={c.value} className="flex items-center gap-2">
                <input type="checkbox" name="classes" value={c.value} defaultChecked={values.classes.includes(c.value)} className="h-4 w-4 accent-brass" />
                {c.label}
              </label>
            ))}
          </div>
          <FieldError id="classes-error" message={errors?.classes} />
        </fieldset>
        <fieldset>
          <legend className="mb-2 font-bold">Trial timing</legend>
          <div className="grid gap-4 sm:grid-cols-3">
            <NumberField name="fixationSeconds" label="Fixation" unit="s" values={values} errors={errors} />
            <NumberField name="cueSeconds" label="Cue" unit="s" values={values} errors={errors} />
            <NumberField name="imagerySeconds" label="Imagery" unit="s" values={values} errors={errors} />
            <NumberField name="restSeconds" label="Rest" unit="s" values={values} errors={errors} />
            <NumberField name="restJitterSeconds" label="Rest jitter, up to" unit="s" values={values} errors={errors} hint="Random extra rest, so trials do not fall into a rhythm." />
            <NumberField name="trialsPerClass" label="Trials per class" unit="count" step="1" values={values} errors={errors} />
          </div>
          <p className="mt-3 text-sm text-haze" aria-live="polite">
            {summary}
          </p>
        </fieldset>
        <fieldset>
          <legend className="mb-2 font-bold">Band and windows</legend>
          <div className="grid gap-4 sm:grid-cols-2">
            <NumberField name="bandLowHz" label="Band low edge" unit="Hz" step="0.5" values={values} errors={errors} />
            <NumberField name="bandHighHz" label="Band high edge" unit="Hz" step="0.5" values={values} errors={errors} hint="Mu 8–13 Hz and beta 13–30 Hz lie over sensorimotor cortex." />
            <NumberField name="windowStartSeconds" label="Training window from" unit="s after cue" values={values} errors={errors} />
            <NumberField name="windowEndSeconds" label="Training window to" unit="s after cue" values={values} errors={errors} />
            <NumberField name="decodingWindowSeconds" label="Decoding window" unit="s" values={values} errors={errors} hint="Length of the sliding band-power window used online." />
          </div>
        </fieldset>
        {readOnly ? null : (
          <div className="flex flex-wrap gap-3">
            {buttons.map((b) => (
              <button key={b.intent} type="submit" name="intent" value={b.intent} className={b.primary ? 'btn-primary' : 'btn-quiet'} disabled={busy || b.disabled}>
                {b.label}
              </button>
            ))}
          </div>
        )}
      </fieldset>
    </Form>
  )
}
