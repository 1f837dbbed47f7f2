// Labelled form controls with inline errors wired for screen readers (aria-invalid and
// aria-describedby point at the message under the field).
import { FieldError } from '~/components/page'
import type { FieldErrors } from '~/lib/forms'

interface Common {
  name: string
  label: string
  errors?: FieldErrors
  hint?: string
  className?: string
}

function describedBy(name: string, errors: FieldErrors | undefined, hint: string | undefined): string | undefined {
  const ids = [errors?.[name] ? `${name}-error` : null, hint ? `${name}-hint` : null].filter(Boolean)
  return ids.length ? ids.join(' ') : undefined
}

function Hint({ name, hint }: { name: string; hint?: string }) {
  return hint ? (
    <p id={`${name}-hint`} className="mt-1 text-xs text-haze">
      {hint}
    </p>
  ) : null
}

export function TextField({
  name,
  label,
  errors,
  hint,
  className,
  ...input
}: Common & Omit<React.InputHTMLAttributes<HTMLInputElement>, 'name'>) {
  return (
    <div className={className}>
      <label htmlFor={name} className="label">
        {label}
      </label>
      <input
        id={name}
        name={name}
        className="field"
        aria-invalid={errors?.[name] ? true : undefined}
        aria-describedby={describedBy(name, errors, hint)}
        {...input}
      />
      <Hint name={name} hint={hint} />
      <FieldError id={`${name}-error`} message={errors?.[name]} />
    </div>
  )
}

export function SelectField({
  name,
  label,
  errors,
  hint,
  className,
  options,
  ...select
}: Common & { options: readonly { value: string; label: string }[] } & Omit<React.SelectHTMLAttributes<HTMLSelectElement>, 'name'>) {
  return (
    <div className={className}>
      <label htmlFor={name} className="label">
        {label}
      </label>
      <select id={name} name={name} className="field" aria-invalid={errors?.[name] ? true : undefined} aria-describedby={describedBy(name, errors, hint)} {...select}>
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
      <Hint name={name} hint={hint} />
      <FieldError id={`${name}-error`} message={errors?.[name]} />
    </div>
  )
}

export function TextAreaField({
  name,
  label,
  errors,
  hint,
  className,
  mono = false,
  ...area
}: Common & { mono?: boolean } & Omit<React.TextareaHTMLAttributes<HTMLTextAreaElement>, 'name'>) {
  return (
    <div className={className}>
      <label htmlFor={name} className="label">
        {label}
      </label>
      <textarea id={name} name={name} className={mono ? 'field font-mono text-sm' : 'field'} aria-invalid={errors?.[name] ? true : undefined} aria-describedby={describedBy(name, errors, hint)} {...area} />
      <Hint name={name} hint={hint} />
      <FieldError id={`${name}-error`} message={errors?.[name]} />
    </div>
  )
}

/** An error that belongs to the whole form rather than one field. */
export function FormError({ errors }: { errors?: FieldErrors }) {
  const message = errors?._form?.[0]
  if (!message) return null
  return (
    <p role="alert" className="rounded-md border border-rust/60 bg-rust/10 px-3 py-2 text-sm text-rust">
      {message}
    </p>
  )
}

/** A short confirmation after a save, announced politely. */
export function Notice({ children }: { children: React.ReactNode }) {
  return (
    <p role="status" className="mb-4 rounded-md border border-sea/50 bg-sea/10 px-3 py-2 text-sm text-sea">
      {children}
    </p>
  )
}
