// Starts a TypeScript worker: registers tsx's loader in this thread, then imports the entry.
// Workers do not inherit the parent's loader hooks, so each one registers its own.
import { workerData } from 'node:worker_threads'
import { register } from 'tsx/esm/api'

register()
await import(workerData.entry)
