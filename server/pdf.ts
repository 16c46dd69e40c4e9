import { createRequire } from 'node:module'
import path from 'node:path'

const require = createRequire(import.meta.url)
// pdfmake 0.3 on the server; the Roboto TTF files bundled in the pdfmake package are the fonts.
const pdfmake = require('pdfmake') as {
  addFonts(f: unknown): void
  setLocalAccessPolicy(cb: (p: string) => boolean): void
  setUrlAccessPolicy(cb: (url: string) => boolean): void
  createPdf(doc: unknown): { getBuffer(): Promise<Buffer> }
}
const fonts = require('pdfmake/fonts/Roboto.js') as { Roboto: Record<string, string> }
const fontDir = path.dirname(require.resolve('pdfmake/fonts/Roboto.js'))
pdfmake.addFonts(fonts)
pdfmake.setLocalAccessPolicy((p) => path.resolve(p).startsWith(fontDir))
// documents never fetch anything from the network
pdfmake.setUrlAccessPolicy(() => false)

/** Renders a pdfmake document definition to a PDF buffer. */
export function renderPdf(doc: Record<string, unknown>): Promise<Buffer> {
  return pdfmake
    .createPdf({ defaultStyle: { font: 'Roboto', fontSize: 9 }, pageSize: 'A4', pageMargins: [36, 48, 36, 48], ...doc })
    .getBuffer()
}

/**
 * A pdfmake table whose first row is the bold column headings and repeats on each page; the caller adds the layout,
 * font size or margin it wants (`{ ...headedTable(…), layout: 'lightHorizontalLines' }`).
 */
export function headedTable(widths: (string | number)[], headings: string[], rows: unknown[][]) {
  return { table: { headerRows: 1, widths, body: [headings.map((text) => ({ text, bold: true })), ...rows] } }
}

/** A document's footer: `<label> · page n of m`, small and centred on every page. */
export function pageFooter(label: string) {
  return (page: number, pages: number) => ({
    text: `${label} · page ${page} of ${pages}`,
    fontSize: 7,
    alignment: 'center',
    margin: [0, 16, 0, 0],
  })
}

/** The small italic note that closes a document: what the register or the record is not, how to read figures. */
export function closingNote(text: string, spaceAbove: number) {
  return { text, fontSize: 7, italics: true, margin: [0, spaceAbove, 0, 0] }
}
