import type { Route } from './+types/cautions'

export const meta: Route.MetaFunction = () => [{ title: 'Cautions · Tiller' }]

const CAUTIONS: { title: string; body: string }[] = [
  {
    title: 'Not a medical device',
    body: 'Tiller is research and rehabilitation-support software. It is not certified as a medical device, and nothing it shows — decoder accuracy, feedback, reports — is a diagnosis or a clinical finding.',
  },
  {
    title: 'Approved protocols and licensed supervision',
    body: 'Run sessions only under a protocol approved by your ethics committee or clinical governance, with the participant’s informed consent on record, and under the supervision of appropriately licensed staff. Follow the regulations that apply where you work; they take precedence over anything in this software.',
  },
  {
    title: 'Electrical safety is the amplifier’s',
    body: 'The safety of anything connected to the participant — the EEG amplifier, electrodes, isolation — is the responsibility of that hardware and its certification (IEC 60601-1 for medical electrical equipment). Tiller only receives data over the network and never makes electrical contact.',
  },
  {
    title: 'Photosensitivity',
    body: 'The feedback view never flashes more than three times in any one second (WCAG 2.3.1, Three Flashes or Below Threshold) and offers a reduced-motion mode. Still, ask about photosensitive epilepsy before a session and stop if the participant feels unwell.',
  },
  {
    title: 'Session length and breaks',
    body: 'Imagery sessions are tiring. How long a session lasts and when to take breaks is the operator’s call, guided by the protocol and by how the participant feels. Pause or stop a run at any time: the record stays consistent.',
  },
  {
    title: 'Data protection',
    body: 'Participants are identified by pseudonymous codes. Keep the key linking codes to people outside Tiller, as your data-protection rules require.',
  },
]

export default function Cautions() {
  return (
    <div className="mx-auto max-w-3xl py-6">
      <h1 className="text-3xl font-bold">Cautions</h1>
      <p className="mt-2 opacity-80">Read these before running a session. They apply to every screen of Tiller.</p>
      <ol className="mt-8 space-y-6">
        {CAUTIONS.map((c, i) => (
          <li key={c.title}>
            <h2 className="text-lg font-bold">
              {i + 1}. {c.title}
            </h2>
            <p className="mt-1 leading-relaxed opacity-90">{c.body}</p>
          </li>
        ))}
      </ol>
    </div>
  )
}
