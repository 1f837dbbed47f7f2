// The lab's session log as a table (TanStack Table), sorted and paged on the server: the
// component only renders a page and reports which column and page the user asked for.
import { createColumnHelper, flexRender, getCoreRowModel, useReactTable, type SortingState } from '@tanstack/react-table'
import { Link } from 'react-router'
import type { SessionLogPage, SessionLogRow } from '~/server/review.server'

// The filter vocabulary, shared with the server's query schema (app/server/review.server.ts).
export const SESSION_STATUSES = ['planned', 'live', 'ended', 'interrupted', 'imported'] as const
export const SIGNOFF_STATES = ['pending', 'reviewed', 'flagged'] as const
export const SESSION_SORTS = ['created', 'started', 'participant', 'operator', 'protocol', 'status', 'signoff'] as const

const column = createColumnHelper<SessionLogRow>()

const dateTime = (iso: string | null) => (iso ? new Date(iso).toLocaleString('en-GB', { dateStyle: 'medium', timeStyle: 'short', timeZone: 'UTC' }) : '—')
const percent = (v: number | null) => (v === null ? '—' : `${(v * 100).toFixed(1)} %`)

export function SignoffBadge({ state, locked }: { state: string; locked?: boolean }) {
  const tone = state === 'reviewed' ? 'border-sea text-sea' : state === 'flagged' ? 'border-rust text-rust' : 'border-ink-600 text-haze'
  return (
    <span className={`inline-flex items-center gap-1 rounded border px-2 py-0.5 text-xs ${tone}`}>
      {state}
      {locked ? <span aria-label="locked" title="Record locked">· locked</span> : null}
    </span>
  )
}

/** Column id -> the API's sort key. */
const SORT_KEYS: Record<string, string> = {
  createdAt: 'created',
  startedAt: 'started',
  participantCode: 'participant',
  operatorName: 'operator',
  protocolName: 'protocol',
  status: 'status',
  signoffState: 'signoff',
}

const columns = [
  column.accessor('createdAt', { header: 'Created (UTC)', cell: (c) => dateTime(c.getValue()) }),
  column.accessor('participantCode', {
    header: 'Participant',
    cell: (c) => (
      <Link className="underline" to={`/review/participants/${c.row.original.participantId}`}>
        {c.getValue()}
      </Link>
    ),
  }),
  column.accessor('operatorName', { header: 'Operator', cell: (c) => c.getValue() ?? '—' }),
  column.accessor('protocolName', { header: 'Protocol' }),
  column.accessor('status', { header: 'Status' }),
  column.accessor('signoffState', { header: 'Sign-off', cell: (c) => <SignoffBadge state={c.getValue()} locked={c.row.original.locked} /> }),
  column.accessor('runCount', { header: 'Runs', enableSorting: false }),
  column.accessor('feedbackAccuracy', {
    header: 'Feedback accuracy',
    enableSorting: false,
    cell: (c) => (c.row.original.feedbackTrials ? `${percent(c.getValue())} of ${c.row.original.feedbackTrials}` : '—'),
  }),
  column.display({
    id: 'open',
    header: () => <span className="sr-only">Open</span>,
    cell: (c) => (
      <Link className="text-brass underline" to={`/review/sessions/${c.row.original.id}`} aria-label={`Review session of ${c.row.original.participantCode}, ${dateTime(c.row.original.createdAt)}`}>
        Review
      </Link>
    ),
  }),
]

export function SessionTable({
  page,
  sort,
  dir,
  loading,
  onSort,
  onPage,
}: {
  page: SessionLogPage
  sort: string
  dir: 'asc' | 'desc'
  loading: boolean
  onSort(sort: string, dir: 'asc' | 'desc'): void
  onPage(page: number): void
}) {
  const sortColumn = Object.entries(SORT_KEYS).find(([, key]) => key === sort)?.[0] ?? 'createdAt'
  const sorting: SortingState = [{ id: sortColumn, desc: dir === 'desc' }]
  const table = useReactTable({
    data: page.rows,
    columns,
    state: { sorting },
    manualSorting: true,
    manualPagination: true,
    pageCount: page.pageCount,
    getCoreRowModel: getCoreRowModel(),
    enableSortingRemoval: false,
    onSortingChange: (updater) => {
      const next = typeof updater === 'function' ? updater(sorting) : updater
      const first = next[0]
      if (first && SORT_KEYS[first.id]) onSort(SORT_KEYS[first.id], first.desc ? 'desc' : 'asc')
    },
  })
  const from = page.total === 0 ? 0 : (page.page - 1) * page.pageSize + 1
  const to = Math.min(page.total, page.page * page.pageSize)
  return (
    <div aria-busy={loading}>
      <div className="overflow-x-auto">
        <table className={`table-plain ${loading ? 'opacity-60' : ''}`}>
          <thead>
            {table.getHeaderGroups().map((group) => (
              <tr key={group.id}>
                {group.headers.map((header) => {
                  const canSort = header.column.getCanSort() && SORT_KEYS[header.column.id] !== undefined
                  const sorted = header.column.getIsSorted()
                  return (
                    <th key={header.id} aria-sort={sorted === 'asc' ? 'ascending' : sorted === 'desc' ? 'descending' : undefined} scope="col">
                      {canSort ? (
                        <button type="button" className="inline-flex items-center gap-1 hover:text-fog" onClick={header.column.getToggleSortingHandler()}>
                          {flexRender(header.column.columnDef.header, header.getContext())}
                          <span aria-hidden="true">{sorted === 'asc' ? '▲' : sorted === 'desc' ? '▼' : '↕'}</span>
                        </button>
                      ) : (
                        flexRender(header.column.columnDef.header, header.getContext())
                      )}
                    </th>
                  )
                })}
              </tr>
            ))}
          </thead>
          <tbody>
            {table.getRowModel().rows.length === 0 ? (
              <tr>
                <td colSpan={columns.length} className="py-6 text-center text-haze">
                  No sessions match these filters.
                </td>
              </tr>
            ) : (
              table.getRowModel().rows.map((row) => (
                <tr key={row.id}>
                  {row.getVisibleCells().map((cell) => (
                    <td key={cell.id}>{flexRender(cell.column.columnDef.cell, cell.getContext())}</td>
                  ))}
                </tr>
              ))
            )}
          </tbody>
        </table>
      </div>
      <nav aria-label="Pages" className="mt-4 flex items-center justify-between text-sm text-haze">
        <span role="status">
          {from}–{to} of {page.total} sessions
        </span>
        <span className="flex items-center gap-2">
          <button type="button" className="btn-quiet" disabled={page.page <= 1 || loading} onClick={() => onPage(page.page - 1)}>
            Previous
          </button>
          <span>
            Page {page.page} of {page.pageCount}
          </span>
          <button type="button" className="btn-quiet" disabled={page.page >= page.pageCount || loading} onClick={() => onPage(page.page + 1)}>
            Next
          </button>
        </span>
      </nav>
    </div>
  )
}
