// Dispatches `tiller <command> [subcommand] ...` to app/cli/commands/<command>.ts. Each command
// module exports `run(args: string[]): Promise<number>` (the exit code) and `summary`, a
// one-line description for `tiller help`.
import { readdirSync } from 'node:fs'
import { fileURLToPath } from 'node:url'

export interface CommandModule {
  summary: string
  run(args: string[]): Promise<number>
}

const commandsDir = fileURLToPath(new URL('./commands/', import.meta.url))

function listCommands(): string[] {
  return readdirSync(commandsDir)
    .filter((f) => f.endsWith('.ts') && !f.endsWith('.test.ts'))
    .map((f) => f.slice(0, -3))
    .sort()
}

async function printHelp(): Promise<void> {
  const lines = ['usage: tiller <command> [options]', '', 'commands:']
  for (const name of listCommands()) {
    const mod = (await import(`./commands/${name}.ts`)) as CommandModule
    lines.push(`  ${name.padEnd(10)} ${mod.summary}`)
  }
  lines.push('', 'Run `tiller <command> --help` for the options of one command.')
  console.log(lines.join('\n'))
}

export async function main(argv: string[]): Promise<number> {
  const [name, ...rest] = argv
  if (!name || name === 'help' || name === '--help' || name === '-h') {
    await printHelp()
    return 0
  }
  if (!listCommands().includes(name)) {
    console.error(`tiller: unknown command '${name}'. Run 'tiller help' for the list.`)
    return 2
  }
  const mod = (await import(`./commands/${name}.ts`)) as CommandModule
  try {
    return await mod.run(rest)
  } catch (error) {
    console.error(`tiller ${name}: ${error instanceof Error ? error.message : String(error)}`)
    return 1
  }
}
