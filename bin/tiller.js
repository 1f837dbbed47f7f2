#!/usr/bin/env node
// The `tiller` command line. The sources are TypeScript; tsx loads them on the fly so the
// command works from a clean clone without a build step.
import { register } from 'tsx/esm/api'

register()
const { main } = await import('../app/cli/main.ts')
process.exitCode = await main(process.argv.slice(2))
