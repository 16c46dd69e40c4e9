import {
  BarChart,
  type BarSeriesOption,
  CustomChart,
  type CustomSeriesOption,
  GaugeChart,
  type GaugeSeriesOption,
  LineChart,
  type LineSeriesOption,
  PieChart,
  type PieSeriesOption,
  ScatterChart,
  type ScatterSeriesOption,
} from 'echarts/charts'
import {
  AriaComponent,
  type AriaComponentOption,
  DataZoomComponent,
  type DataZoomComponentOption,
  GridComponent,
  type GridComponentOption,
  LegendComponent,
  type LegendComponentOption,
  MarkAreaComponent,
  type MarkAreaComponentOption,
  MarkLineComponent,
  type MarkLineComponentOption,
  TooltipComponent,
  type TooltipComponentOption,
} from 'echarts/components'
import { type ComposeOption, use } from 'echarts/core'
import { CanvasRenderer } from 'echarts/renderers'

// The product's charts (ECharts through vue-echarts): the chart kinds and parts they draw with, registered once for
// every chart component, their option type, and the colours they share.

use([
  BarChart,
  CustomChart,
  GaugeChart,
  LineChart,
  PieChart,
  ScatterChart,
  AriaComponent,
  DataZoomComponent,
  GridComponent,
  LegendComponent,
  MarkAreaComponent,
  MarkLineComponent,
  TooltipComponent,
  CanvasRenderer,
])

export type ChartOption = ComposeOption<
  | BarSeriesOption
  | CustomSeriesOption
  | GaugeSeriesOption
  | LineSeriesOption
  | PieSeriesOption
  | ScatterSeriesOption
  | AriaComponentOption
  | DataZoomComponentOption
  | GridComponentOption
  | LegendComponentOption
  | MarkAreaComponentOption
  | MarkLineComponentOption
  | TooltipComponentOption
>

/** Ink for the main series, red for what exceeds a target, amber for a warning band, grey for axis text. */
export const CHART_COLORS = { ink: '#1d4f6e', red: '#b3261e', amber: '#c98a1b', axis: '#4a5d68' } as const
