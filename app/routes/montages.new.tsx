import { useMemo, useState } from 'react'
import { Form, redirect, useNavigation } from 'react-router'
import type { Route } from './+types/montages.new'
import { FormError, SelectField, TextAreaField, TextField } from '~/components/form-fields'
import { FieldError, PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { ScalpLegend, ScalpSites, type ScalpSite } from '~/components/scalp-sites'
import { MontageError, montagePreset, parseMontageCsv, PRESET_COUNTS, presetName, type PresetCount } from '~/engine/montage'
import { parseForm } from '~/lib/forms'
import { useHydrated } from '~/lib/use-hydrated'
import { requireUser } from '~/server/auth.server'
import { createMontage, montageCreateSchema, montageFormData } from '~/server/montages.server'

export const meta: Route.MetaFunction = () => [{ title: 'New montage · Tiller' }]

export async function loader({ request, context }: Route.LoaderArgs) {
  await requireUser(request, context, { roles: ['supervisor'] })
  return null
}

export async function action({ request, context }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  const form = parseForm(montageCreateSchema, await montageFormData(request))
  if (!form.ok) return { errors: form.errors, values: form.values }
  const row = await createMontage(context.services.db, user, form.data)
  throw redirect(`/montages?saved=${encodeURIComponent(row.name)}`)
}

const PRESET_OPTIONS = PRESET_COUNTS.map((n) => ({ value: String(n), label: `${n} channels — ${presetName(n)}` }))

/** What the drawing shows before saving: the preset, or the pasted/selected CSV when it parses. */
function usePreview(source: string, preset: string, csv: string): { sites: ScalpSite[]; problem: string | null } {
  return useMemo(() => {
    if (source === 'preset') return { sites: montagePreset(Number(preset) as PresetCount), problem: null }
    if (!csv.trim()) return { sites: [], problem: null }
    try {
      return { sites: parseMontageCsv(csv), problem: null }
    } catch (error) {
      return { sites: [], problem: error instanceof MontageError ? error.message : 'The file could not be read' }
    }
  }, [source, preset, csv])
}

export default function NewMontage({ actionData }: Route.ComponentProps) {
  const values = actionData?.values ?? {}
  const errors = actionData?.errors
  const busy = useNavigation().state === 'submitting'
  const [source, setSource] = useState(values.source ?? 'preset')
  const [preset, setPreset] = useState(values.preset ?? '16')
  const [csv, setCsv] = useState(values.csv ?? '')
  const [reference, setReference] = useState(values.reference ?? 'FCz')
  const [ground, setGround] = useState(values.ground ?? 'AFz')
  const preview = usePreview(source, preset, csv)
  const hydrated = useHydrated()

  async function readFile(event: React.ChangeEvent<HTMLInputElement>) {
    const file = event.currentTarget.files?.[0]
    // The preview reads the file locally; the form still uploads the file itself.
    if (file && file.size <= 256 * 1024) setCsv(await file.text())
  }

  return (
    <div>
      <PageHeader title="New montage" lead="Start from a 10-20 / 10-10 preset or upload the cap's own layout as CSV." />
      <div className="grid max-w-6xl gap-6 lg:grid-cols-[minmax(0,1fr)_24rem]">
        <Form method="post" encType="multipart/form-data" className="panel space-y-5" noValidate>
          <FormError errors={errors} />
          <TextField name="name" label="Name" defaultValue={values.name ?? ''} errors={errors} required placeholder="e.g. Sensorimotor cap, room 2" />
          <fieldset>
            <legend className="label">Channels from</legend>
            <div className="flex gap-6">
              {[
                { value: 'preset', label: 'A preset' },
                { value: 'csv', label: 'A CSV file' },
              ].map((o) => (
                <label key={o.value} className="flex items-center gap-2">
                  <input type="radio" name="source" value={o.value} checked={source === o.value} onChange={() => setSource(o.value)} className="accent-brass" />
                  {o.label}
                </label>
              ))}
            </div>
            <FieldError id="source-error" message={errors?.source} />
          </fieldset>
          <div hidden={hydrated && source !== 'preset'}>
            <SelectField name="preset" label="Preset" options={PRESET_OPTIONS} value={preset} onChange={(e) => setPreset(e.currentTarget.value)} errors={errors} />
          </div>
          <div className="space-y-3" hidden={hydrated && source !== 'csv'}>
            <div>
              <label htmlFor="csvFile" className="label">
                CSV file
              </label>
              <input id="csvFile" name="csvFile" type="file" accept=".csv,.txt,text/csv,text/plain" onChange={readFile} className="block text-sm text-haze file:mr-3 file:rounded-md file:border file:border-ink-600 file:bg-ink-800 file:px-3 file:py-1.5 file:text-fog" />
            </div>
            <TextAreaField
              name="csv"
              label="…or paste the lines"
              rows={8}
              value={csv}
              onChange={(e) => setCsv(e.currentTarget.value)}
              errors={errors}
              mono
              hint="One channel per line: name,x,y,z (x to the right ear, y to the nose, z up; any unit) or a 10-20/10-10 name alone. A header line and # comments are skipped."
            />
          </div>
          <div className="grid gap-5 sm:grid-cols-2">
            <TextField name="reference" label="Reference" value={reference} onChange={(e) => setReference(e.currentTarget.value)} errors={errors} hint="A site (FCz) or a place (linked earlobes)." />
            <TextField name="ground" label="Ground" value={ground} onChange={(e) => setGround(e.currentTarget.value)} errors={errors} hint="Usually AFz or Fpz." />
          </div>
          <button type="submit" className="btn-primary" disabled={busy}>
            {busy ? 'Saving…' : 'Save montage'}
          </button>
        </Form>
        <section aria-labelledby="preview-heading" className="panel">
          <h2 id="preview-heading" className="font-bold">
            Preview
          </h2>
          {preview.problem ? (
            <p className="mt-2 text-sm text-rust">{preview.problem}</p>
          ) : preview.sites.length === 0 ? (
            <p className="mt-2 text-sm text-haze">Choose a file or paste its lines to see the sites.</p>
          ) : (
            <>
              <p className="mt-1 text-sm text-haze">{preview.sites.length} sites, seen from above, nose up.</p>
              <ScalpSites channels={preview.sites} reference={reference} ground={ground} title="Preview of the montage" />
              <ScalpLegend reference={reference} ground={ground} />
            </>
          )}
        </section>
      </div>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
