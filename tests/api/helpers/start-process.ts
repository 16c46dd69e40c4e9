import { type ChildProcess, execFile, spawn } from 'node:child_process'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { promisify } from 'node:util'

/**
 * Runs `server/start.ts` (or `npm start`) with `env` over this process's environment, collecting what it writes;
 * `onStdout` sees the standard output as it comes (JSON log lines, for one).
 */
export function spawnStart(
  env: Record<string, string>,
  opts: { how?: 'node' | 'npm'; onStdout?: (text: string) => void } = {},
) {
  const [cmd, args] =
    opts.how === 'npm'
      ? ['npm', ['start', '--', '--no-build']]
      : [process.execPath, ['--import', 'tsx', 'server/start.ts', '--no-build']]
  const child = spawn(cmd, args, { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] })
  let out = ''
  child.stdout!.on('data', (b: Buffer) => {
    out += b.toString()
    opts.onStdout?.(b.toString())
  })
  child.stderr!.on('data', (b: Buffer) => (out += b.toString()))
  return { child, output: () => out }
}

/**
 * Starts as `spawnStart` does and resolves once the process says it is ready (with its URL), or rejects with its
 * output when it exits before.
 */
export function startServer(
  env: Record<string, string>,
  opts: { how?: 'node' | 'npm'; onStdout?: (text: string) => void } = {},
): Promise<{ child: ChildProcess; url: string; output: () => string }> {
  const { child, output } = spawnStart(env, opts)
  return new Promise((resolve, reject) => {
    const onData = () => {
      const m = /ready at (http:\/\/127\.0\.0\.1:\d+)/.exec(output())
      if (m) resolve({ child, url: m[1], output })
    }
    child.stdout!.on('data', onData)
    child.stderr!.on('data', onData)
    child.on('exit', (code) => reject(new Error(`start exited with ${code} before it was ready:\n${output()}`)))
  })
}

/** Resolves with the process's exit code once it has exited (null when a signal ended it). */
export function exited(child: ChildProcess): Promise<number | null> {
  return new Promise((resolve) => {
    if (child.exitCode !== null || child.signalCode !== null) resolve(child.exitCode)
    else child.once('exit', (code) => resolve(code))
  })
}

const runFile = promisify(execFile)
const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..')

/** Runs one of the command-line scripts in server/cli (as its npm script does, without npm) with `env`. */
export async function runCli(script: string, env: NodeJS.ProcessEnv): Promise<{ code: number; out: string }> {
  try {
    const { stdout } = await runFile(process.execPath, ['--import', 'tsx', `server/cli/${script}.ts`], {
      cwd: repoRoot,
      env,
      timeout: 60_000,
    })
    return { code: 0, out: stdout }
  } catch (err) {
    const e = err as { code?: number; stdout?: string; stderr?: string }
    return { code: typeof e.code === 'number' ? e.code : -1, out: `${e.stdout ?? ''}${e.stderr ?? ''}` }
  }
}
