import { readFileSync, readdirSync, statSync } from 'node:fs'
import path from 'node:path'
import { describe, expect, it } from 'vitest'

// Code comments point into docs/ (docs/conventions.md): every cited document, and every section cited by name,
// must exist. Common practice; no external source.
const root = path.resolve(import.meta.dirname, '../../..')

function files(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = path.join(dir, name)
    if (statSync(p).isDirectory()) return files(p)
    return /\.(ts|vue)$/.test(name) ? [p] : []
  })
}

/** Each `docs/x.md` a source file cites, with the quoted section name when one follows (`docs/x.md, "Name"`). */
function citations(): { file: string; doc: string; section: string | null }[] {
  const out: { file: string; doc: string; section: string | null }[] = []
  for (const f of ['server', 'shared', 'src'].flatMap((d) => files(path.join(root, d)))) {
    const text = readFileSync(f, 'utf8').replace(/\n\s*(\*|\/\/)\s*/g, ' ')
    for (const m of text.matchAll(/docs\/([\w./-]+\.md)(?:,\s*"([^"]+)")?/g))
      out.push({ file: path.relative(root, f), doc: m[1], section: m[2] ?? null })
  }
  return out
}

describe('documents cited by the code', () => {
  const all = citations()
  it('finds the security document cited with its sections', () => {
    expect(all.filter((c) => c.doc === 'security.md').length).toBeGreaterThan(3)
  })
  for (const doc of [...new Set(all.map((c) => c.doc))]) {
    it(`docs/${doc} exists and holds every section cited`, () => {
      const p = path.join(root, 'docs', doc)
      const text = readFileSync(p, 'utf8')
      // a section is a heading or a bold lead-in of a list item (`- **Files.** …`)
      const headings = new Set([
        ...[...text.matchAll(/^#{1,4} (.+)$/gm)].map((m) => m[1].trim()),
        ...[...text.matchAll(/^\s*- \*\*([^*]+?)\.?\*\*/gm)].map((m) => m[1].trim()),
      ])
      const missing = all
        .filter((c) => c.doc === doc && c.section && !headings.has(c.section))
        .map((c) => `${c.file}: "${c.section}"`)
      expect(missing).toEqual([])
    })
  }
})
