import { Form, redirect, useNavigation } from 'react-router'
import type { Route } from './+types/montages.$montageId'
import { FormError, TextField } from '~/components/form-fields'
import { PageHeader } from '~/components/page'
import { RouteError } from '~/components/route-error'
import { ScalpLegend, ScalpSites } from '~/components/scalp-sites'
import { parseForm } from '~/lib/forms'
import { requireUser } from '~/server/auth.server'
import { getMontage, MontageInUseError, montageEditSchema, updateMontage } from '~/server/montages.server'

export const meta: Route.MetaFunction = ({ data }) => [{ title: `${data?.montage.name ?? 'Montage'} · Tiller` }]

export async function loader({ request, context, params }: Route.LoaderArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor', 'operator'] })
  return { canManage: user.role === 'supervisor', montage: await getMontage(context.services.db, user, params.montageId) }
}

export async function action({ request, context, params }: Route.ActionArgs) {
  const user = await requireUser(request, context, { roles: ['supervisor'] })
  const form = parseForm(montageEditSchema, await request.formData())
  if (!form.ok) return { errors: form.errors, values: form.values }
  try {
    const row = await updateMontage(context.services.db, user, params.montageId, form.data)
    throw redirect(`/montages?saved=${encodeURIComponent(row.name)}`)
  } catch (error) {
    if (error instanceof MontageInUseError) return { errors: { reference: [error.message] }, values: form.data }
    throw error
  }
}

export default function Montage({ loaderData, actionData }: Route.ComponentProps) {
  const { montage: m, canManage } = loaderData
  const values = { name: m.name, reference: m.reference, ground: m.ground, ...actionData?.values }
  const busy = useNavigation().state === 'submitting'
  return (
    <div className="max-w-6xl">
      <PageHeader title={m.name} lead={`${m.channels.length} channels · used by ${m.sessions} session(s)`} />
      <div className="grid gap-6 lg:grid-cols-[26rem_minmax(0,1fr)]">
        <section className="panel" aria-label="Scalp diagram">
          <ScalpSites channels={m.channels} reference={m.reference} ground={m.ground} title={`Sites of ${m.name}`} />
          <ScalpLegend reference={m.reference} ground={m.ground} />
        </section>
        <div className="space-y-6">
          {canManage ? (
            <Form method="post" className="panel space-y-4" noValidate>
              <h2 className="font-bold">Name, reference and ground</h2>
              <FormError errors={actionData?.errors} />
              <TextField name="name" label="Name" defaultValue={values.name} errors={actionData?.errors} />
              <div className="grid gap-4 sm:grid-cols-2">
                <TextField
                  name="reference"
                  label="Reference"
                  defaultValue={values.reference}
                  errors={actionData?.errors}
                  hint={m.sessions > 0 ? 'Fixed: sessions were recorded against it.' : undefined}
                  readOnly={m.sessions > 0}
                />
                <TextField name="ground" label="Ground" defaultValue={values.ground} errors={actionData?.errors} />
              </div>
              <button type="submit" className="btn-primary" disabled={busy}>
                {busy ? 'Saving…' : 'Save'}
              </button>
            </Form>
          ) : null}
          <section className="panel">
            <h2 className="mb-2 font-bold">Channels</h2>
            <div className="max-h-[28rem] overflow-auto" tabIndex={0} aria-label="Channel positions">
              <table className="table-plain">
                <thead>
                  <tr>
                    <th>#</th>
                    <th>Name</th>
                    <th className="text-right">x</th>
                    <th className="text-right">y</th>
                    <th className="text-right">z</th>
                  </tr>
                </thead>
                <tbody className="font-mono">
                  {m.channels.map((c, i) => (
                    <tr key={c.name}>
                      <td className="text-haze">{i + 1}</td>
                      <td className="font-sans">{c.name}</td>
                      <td className="text-right">{c.x.toFixed(3)}</td>
                      <td className="text-right">{c.y.toFixed(3)}</td>
                      <td className="text-right">{c.z.toFixed(3)}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
            <p className="mt-2 text-xs text-haze">Unit sphere: x toward the right ear, y toward the nose, z up.</p>
          </section>
        </div>
      </div>
    </div>
  )
}

export function ErrorBoundary() {
  return <RouteError />
}
