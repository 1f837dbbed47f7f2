import { Link } from 'react-router'

/** Older/newer links for a paginated list; page 1 is the newest. */
export function Pager({ page, pages, label }: { page: number; pages: number; label: string }) {
  if (pages <= 1) return null
  return (
    <nav aria-label={`${label} pages`} className="mt-4 flex items-center gap-4 text-sm">
      {page > 1 ? (
        <Link to={`?page=${page - 1}`} className="btn-quiet">
          ← Newer
        </Link>
      ) : (
        <span className="btn-quiet opacity-50" aria-disabled="true">
          ← Newer
        </span>
      )}
      <span className="text-haze">
        Page {page} of {pages}
      </span>
      {page < pages ? (
        <Link to={`?page=${page + 1}`} className="btn-quiet">
          Older →
        </Link>
      ) : (
        <span className="btn-quiet opacity-50" aria-disabled="true">
          Older →
        </span>
      )}
    </nav>
  )
}
