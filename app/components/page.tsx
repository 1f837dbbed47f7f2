/** The heading block every console page starts with. */
export function PageHeader({ title, lead, actions }: { title: string; lead?: React.ReactNode; actions?: React.ReactNode }) {
  return (
    <div className="mb-6 flex flex-wrap items-end justify-between gap-4">
      <div>
        <h1 className="text-2xl font-bold tracking-tight">{title}</h1>
        {lead ? <p className="mt-1 max-w-2xl text-haze">{lead}</p> : null}
      </div>
      {actions ? <div className="flex gap-2">{actions}</div> : null}
    </div>
  )
}

export function FieldError({ id, message }: { id: string; message?: string | string[] }) {
  const text = Array.isArray(message) ? message[0] : message
  if (!text) return null
  return (
    <p id={id} className="field-error" role="alert">
      {text}
    </p>
  )
}
