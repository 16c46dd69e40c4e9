import { pageFooter, renderPdf } from '../../pdf.ts'
import type { ResponseSheetRow } from './response-sheets.repository.ts'

// Alarm response sheets: what the operator needs at hand for each alarm (ISA-18.2 expects response information
// to be available to the operator; from memory). One page per alarm; docs/register.md#alarm-response-sheets.

const TYPE: Record<string, string> = {
  absolute: 'absolute',
  deviation: 'deviation',
  rate_of_change: 'rate of change',
  discrepancy: 'discrepancy',
  bad_value: 'bad value',
}
const IMPACT: Record<string, string> = {
  safety: 'safety',
  environment: 'environment',
  asset_production: 'asset or production',
}
const orDash = (s: string | null | undefined) => (s && s.trim() ? s : '—')
const n = (v: unknown) => String(Number(v))

function sheet(r: ResponseSheetRow, printed: string, first: boolean) {
  const row = (label: string, value: string) => [{ text: label, color: '#555' }, value]
  const deadband = r.deadband_unit === 'percent_span' ? `${n(r.deadband)} % of span` : `${n(r.deadband)} ${r.unit}`
  const kind = r.limit_class === 'alert' ? 'Alert (no alarm priority)' : `Alarm, priority ${r.priority ?? '—'}`
  return [
    {
      text: `${r.site_name} · ${r.area_name} · ${r.process_name}`,
      color: '#555',
      pageBreak: first ? undefined : 'before',
    },
    { text: `${r.tag} — ${r.direction} ${r.limit_class}`, style: 'h1' },
    { text: orDash(r.description), fontSize: 11, margin: [0, 0, 0, 8] },
    {
      table: {
        widths: ['32%', '*'],
        body: [
          row('Class and priority', kind),
          row('Alarm type', TYPE[r.alarm_type] ?? r.alarm_type),
          row(
            'Setpoint',
            `${r.direction === 'high' ? '≥' : '≤'} ${n(r.setpoint)} ${r.unit} on ${r.instrument_tag} · deadband ` +
              `${deadband} · on-delay ${n(r.on_delay_sec)} s · off-delay ${n(r.off_delay_sec)} s` +
              (r.latching ? ' · latching' : ''),
          ),
          row('Time to respond', r.response_time_min === null ? '—' : `${n(r.response_time_min)} min`),
          row(
            'Consequence of inaction',
            `${orDash(r.consequence)}` +
              `\n(${r.impact_category ? IMPACT[r.impact_category] : 'category not set'}, severity ${r.severity})`,
          ),
          row('Causes', orDash(r.causes)),
          row('How to confirm it', orDash(r.confirmation)),
          row('Corrective action', orDash(r.operator_response)),
          ...(r.safety_related_alarm
            ? [
                row(
                  'Safety-related alarm',
                  `Credited as a protection layer with a risk reduction of ${n(r.claimed_risk_reduction)}: ` +
                    'respond every time, within the time to respond.',
                ),
              ]
            : []),
        ],
      },
      layout: 'lightHorizontalLines',
    },
    {
      text:
        `Register revision ${r.revision}${r.status === 'active' ? '' : ` (${r.status}, not in service)`} · ` +
        `printed ${printed} (${r.time_zone}).`,
      fontSize: 8,
      color: '#555',
      margin: [0, 8, 0, 0],
    },
    {
      text:
        'This sheet is printed from the register; the alarm system is what protects. Check the setting on the ' +
        "device and follow the plant's procedures; they prevail over this sheet.",
      fontSize: 8,
      italics: true,
      margin: [0, 4, 0, 0],
    },
  ]
}

/** One page per alarm or alert, in the order given. */
export function responseSheetsPdf(rows: ResponseSheetRow[], title: string, printedAt: Date): Promise<Buffer> {
  const tz = rows[0]?.time_zone ?? 'UTC'
  const printed = printedAt.toLocaleString('en-GB', { timeZone: tz, dateStyle: 'medium', timeStyle: 'short' })
  return renderPdf({
    info: { title, creator: 'Limitkeeper' },
    footer: pageFooter(title),
    styles: { h1: { fontSize: 16, bold: true, margin: [0, 2, 0, 2] } },
    content: rows.flatMap((r, i) => sheet(r, printed, i === 0)),
  })
}
