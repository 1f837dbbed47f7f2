// Controls for the light "paper" pages (sign-in, invitation, reset): navy on paper, the
// same look as the sign-in form.
import type { FieldErrors } from '~/lib/forms'

export function PaperField({ name, label, errors, ...input }: { name: string; label: string; errors?: FieldErrors } & Omit<React.InputHTMLAttributes<HTMLInputElement>, 'name'>) {
  const invalid = Boolean(errors?.[name])
  return (
    <div>
      <label htmlFor={name} className="mb-1 block text-sm font-medium">
        {label}
      </label>
      <input
        id={name}
        name={name}
        aria-invalid={invalid || undefined}
        aria-describedby={invalid ? `${name}-error` : undefined}
        className="w-full rounded-md border border-navy/30 bg-white px-3 py-2"
        {...input}
      />
      {invalid ? (
        <p id={`${name}-error`} role="alert" className="mt-1 text-sm text-[#8a2a15]">
          {errors?.[name]?.[0]}
        </p>
      ) : null}
    </div>
  )
}

export function PaperAlert({ children, tone = 'error' }: { children: React.ReactNode; tone?: 'error' | 'ok' }) {
  const cls = tone === 'error' ? 'bg-[#fbe3dc] text-[#8a2a15]' : 'bg-[#dcefe6] text-[#17513a]'
  return (
    <p role={tone === 'error' ? 'alert' : 'status'} className={`rounded-md px-3 py-2 text-sm ${cls}`}>
      {children}
    </p>
  )
}

export function PaperButton({ children, busy, ...button }: { busy?: boolean } & React.ButtonHTMLAttributes<HTMLButtonElement>) {
  return (
    <button type="submit" disabled={busy} className="w-full rounded-md bg-navy px-4 py-2 font-medium text-paper hover:bg-[#233a52] disabled:opacity-60" {...button}>
      {children}
    </button>
  )
}

