import { type FunctionalComponent, type PropType, h } from 'vue'
import './cell-marks.css'

/**
 * Chips and icons for the cells of long tables, as plain elements: a functional component makes no component
 * instance, where each Vuetify chip or icon makes two or three, and the register draws several per row
 * (docs/architecture.md#first-load). They look like Vuetify's small chips and icons and take the theme's colour
 * names (`success`, `warning`, ...) or a CSS colour. Class, style and data attributes given to either fall through to
 * its element (declared props: Vue's rule for functional components).
 */

const isThemeColor = (color: string) => /^[a-z][a-z-]*$/.test(color)
const colorOf = (color: string | undefined) =>
  !color ? {} : isThemeColor(color) ? { class: `text-${color}` } : { style: { color } }

export interface CellIconProps {
  /** An SVG path (`@mdi/js`). */
  icon: string
  size?: number
  color?: string
  title?: string
}

export const AppCellIcon: FunctionalComponent<CellIconProps> = (p) => {
  const c = colorOf(p.color)
  return h(
    'svg',
    {
      class: ['app-cell-icon', c.class],
      style: c.style,
      width: p.size ?? 16,
      height: p.size ?? 16,
      viewBox: '0 0 24 24',
      role: p.title ? 'img' : undefined,
      'aria-hidden': p.title ? undefined : 'true',
    },
    p.title ? [h('title', p.title), h('path', { d: p.icon })] : [h('path', { d: p.icon })],
  )
}
AppCellIcon.props = { icon: { type: String, required: true }, size: Number, color: String, title: String }

export interface CellChipProps {
  color?: string
  /** tonal: tinted background; flat: filled in the colour; outlined: a border in the colour. */
  variant?: 'tonal' | 'flat' | 'outlined'
  /** Square corners. */
  label?: boolean
  /** An SVG path shown before the text. */
  icon?: string
}

export const AppCellChip: FunctionalComponent<CellChipProps> = (p, { slots }) => {
  const variant = p.variant ?? 'tonal'
  const flat = variant === 'flat' && p.color && isThemeColor(p.color)
  const c = flat ? { class: `bg-${p.color}` } : colorOf(p.color)
  return h(
    'span',
    {
      class: ['app-cell-chip', `app-cell-chip--${variant}`, { 'app-cell-chip--label': p.label }, c.class],
      style: c.style,
    },
    [p.icon ? h(AppCellIcon, { icon: p.icon, size: 16, class: 'app-cell-chip__icon' }) : null, slots.default?.()],
  )
}
AppCellChip.props = {
  color: String,
  variant: String as PropType<CellChipProps['variant']>,
  label: Boolean,
  icon: String,
}
