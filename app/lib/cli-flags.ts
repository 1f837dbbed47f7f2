// Reads `--flag value`, `--flag=value` and bare words from a command line, for the `tiller`
// commands. Pure (no Node APIs) so engine and simulator option parsers can share it.

/**
 * Calls `onFlag` for each word. `value()` takes the flag's value (inline after '=' or the next
 * word) and throws a readable error when there is none; `arg` is the word as typed.
 */
export function readFlags(args: readonly string[], onFlag: (flag: string, value: () => string, arg: string) => void): void {
  for (let i = 0; i < args.length; i++) {
    const arg = args[i]
    const eq = arg.startsWith('--') ? arg.indexOf('=') : -1
    const flag = eq > 0 ? arg.slice(0, eq) : arg
    const inline = eq > 0 ? arg.slice(eq + 1) : undefined
    onFlag(
      flag,
      () => {
        const v = inline ?? args[++i]
        if (v === undefined) throw new Error(`${flag} needs a value`)
        return v
      },
      arg,
    )
  }
}
