import { precautionLines, type TripTestDto } from '../../../shared/schemas/trip-tests.ts'
import { closingNote, headedTable, pageFooter, renderPdf } from '../../pdf.ts'

function v(x: unknown, unit = ''): string {
  return x === null || x === undefined || x === '' ? '—' : `${x}${unit ? ` ${unit}` : ''}`
}
const yn = (b: boolean | null) => (b === null ? 'not checked' : b ? 'yes' : 'NO')
const MEANING: Record<string, string> = {
  performed: 'performed',
  witnessed: 'witnessed',
  returned_to_service: 'returned to service (forces, jumpers, bypasses removed)',
  accepted: 'accepted by operations',
}
const RESULT: Record<string, string> = {
  in_tolerance: 'in tolerance',
  out_safe: 'out of tolerance, safe side',
  out_dangerous: 'OUT OF TOLERANCE, DANGEROUS SIDE',
  no_trip: 'DID NOT TRIP',
  out: 'OUT OF TOLERANCE',
}

/** The certificate of one trip test: what was tested, how, the as-found/as-left results and the signatures. */
export function tripTestCertificate(
  t: TripTestDto,
  ctx: { siteName: string; limitDescription: string; printedAt: Date; timeZone: string },
): Promise<Buffer> {
  const local = (iso: string) =>
    new Date(iso).toLocaleString('en-GB', { timeZone: ctx.timeZone, dateStyle: 'medium', timeStyle: 'short' })
  const row = (label: string, value: string) => [{ text: label, color: '#555' }, value]
  return renderPdf({
    info: { title: `Trip test certificate #${t.id}`, creator: 'Limitkeeper' },
    footer: pageFooter(`Trip test #${t.id} · record hash ${t.contentHash}`),
    content: [
      { text: 'Trip test certificate', style: 'h1' },
      { text: `${t.limitTag} — ${ctx.limitDescription}`, fontSize: 11, margin: [0, 0, 0, 2] },
      {
        text:
          `${ctx.siteName} · test #${t.id} · ` +
          `${t.kind} test · ` +
          `performed ${local(t.performedAt)} (${ctx.timeZone})`,
        margin: [0, 0, 0, 10],
      },
      {
        table: {
          widths: ['35%', '*'],
          body: [
            row('Result', t.passed ? 'PASSED — the protection is proven' : `FAILED — ${t.failReasons.join('; ')}`),
            row('Setpoint (limit revision)', `${t.setpoint} ${t.unit} (revision ${t.limitRevision})`),
            row(
              'Tolerance',
              `± ${t.toleranceEu} ${t.unit}` +
                `${t.toleranceUnit === 'percent_span' ? ` (± ${t.tolerance} % of span)` : ''}`,
            ),
            row(
              'As found',
              `${t.asFound === null ? 'no trip' : `${t.asFound} ${t.unit}`}` +
                `${t.asFoundSignal ? ` (read ${t.asFoundSignal.value} ${t.asFoundSignal.unit})` : ''}` +
                ` — ${RESULT[t.asFoundResult]}`,
            ),
            row('As left', `${v(t.asLeft ?? t.asFound, t.unit)} — ${RESULT[t.asLeftResult]}`),
            row('Reset value', v(t.resetValue, t.unit)),
            row('Latch held until reset', yn(t.latchHeld)),
            row('Reset refused while beyond the limit', yn(t.resetRefusedWhileActive)),
            row('Reset accepted after return', yn(t.resetAcceptedAfterReturn)),
            row('Final element acted', yn(t.finalElementOk)),
            row('Response time', `${v(t.responseTimeSec, 's')} (required ≤ ${v(t.requiredResponseTimeSec, 's')})`),
            row(
              'Method',
              `${t.method}${t.injectionPoint ? ` at ${t.injectionPoint}` : ''}` +
                `${t.sourceMode ? `, ${t.sourceMode}` : ''}` +
                `${t.coldJunctionC !== null ? `, cold junction ${t.coldJunctionC} °C` : ''}`,
            ),
            ...(t.method === 'setpoint_lowered'
              ? [row('Restored setpoint read back', v(t.setpointRestoredReadBack, t.unit))]
              : []),
            ...(t.method === 'reference_gauge'
              ? [row('Reference', 'Switch tested against a reference gauge; no signal injected')]
              : []),
            row('Procedure', v(t.procedureRef)),
            row('Device serial', v(t.deviceSerial)),
            row('Calibrator (due date)', `${v(t.calibratorId)} (${v(t.calibratorDueDate)})`),
            row('Work order', v(t.workOrder)),
            row(
              'Precautions',
              precautionLines(t.precautions)
                .map((l) => l.text)
                .join('\n'),
            ),
            row('Bypass used', t.bypassId ? `#${t.bypassId}` : 'none'),
            row('Notes', v(t.notes)),
          ],
        },
        layout: 'lightHorizontalLines',
      },
      { text: 'Signatures', style: 'h2' },
      {
        ...headedTable(
          ['25%', '15%', '25%', '*'],
          ['Name', 'Meaning', 'Time', 'Record hash signed'],
          [
            ...t.signatures.map((s) => [
              s.name,
              MEANING[s.meaning] ?? s.meaning,
              local(s.at),
              `${s.contentHash.slice(0, 24)}…${s.matchesContent ? '' : ' (does not match)'}`,
            ]),
            ...(t.witnessRequired && !t.signatures.some((s) => s.meaning === 'witnessed')
              ? [['—', 'witnessed', 'required, missing', '']]
              : []),
            ...(t.signatures.some((s) => s.meaning === 'returned_to_service')
              ? []
              : [['—', MEANING.returned_to_service, 'not signed yet', '']]),
          ],
        ),
        layout: 'lightHorizontalLines',
      },
      closingNote(
        `Printed ${ctx.printedAt.toISOString()} by Limitkeeper. ` +
          "This certificate records a test; it does not replace the plant's procedures. " +
          'Settings must be verified on the device.',
        16,
      ),
    ],
    styles: {
      h1: { fontSize: 16, bold: true, margin: [0, 0, 0, 4] },
      h2: { fontSize: 11, bold: true, margin: [0, 12, 0, 4] },
    },
  })
}
