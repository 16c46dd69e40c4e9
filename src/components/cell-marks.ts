import { type FunctionalComponent, type PropType, h } from 'vue'
import './cell-marks.css'

/**
 * Chips and icons for the cells of long tables, as plain elements: a functional component is far lighter than a
 * Vuetify chip or icon (two or three stateful components each). They look like Vuetify's small chips and icons and
 * take the theme's colour names (`success`, `warning`, ...) or a CSS colour. Class, style and data attributes given to
 * either fall through to its element (declared props: Vue's rule for functional components). The register's rows
 * draw the same elements in their own template with `cellIconLook` and `cellChipLook`, without even a functional
 * component per mark (docs/architecture.md#first-load).
 */

const isThemeColor = (color: string) => /^[a-z][a-z-]*$/.test(color)
const colorOf = (color: string | undefined): { class?: string; style?: { color: string } } =>
  !color ? {} : isThemeColor(color) ? { class: `text-${color}` } : { style: { color } }

/** The class and style of a cell icon's `svg` (width, height and `viewBox="0 0 24 24"` are the caller's). */
export function cellIconLook(color?: string) {
  const c = colorOf(color)
  return { class: ['app-cell-icon', c.class], style: c.style }
}

/** The class and style of a cell chip's `span`. */
export function cellChipLook(p: Pick<CellChipProps, 'color' | 'variant' | 'label'>) {
  const variant = p.variant ?? 'tonal'
  const flat = variant === 'flat' && p.color && isThemeColor(p.color)
  const c = flat ? { class: `bg-${p.color}` } : colorOf(p.color)
  return {
    class: ['app-cell-chip', `app-cell-chip--${variant}`, { 'app-cell-chip--label': p.label }, c.class],
    style: c.style,
  }
}

export interface CellIconProps {
  /** An SVG path (`@mdi/js`). */
  icon: string
  size?: number
  color?: string
  title?: string
}

export const AppCellIcon: FunctionalComponent<CellIconProps> = (p) =>
  h(
    'svg',
    {
      ...cellIconLook(p.color),
      width: p.size ?? 16,
      height: p.size ?? 16,
      viewBox: '0 0 24 24',
      role: p.title ? 'img' : undefined,
      'aria-hidden': p.title ? undefined : 'true',
    },
    p.title ? [h('title', p.title), h('path', { d: p.icon })] : [h('path', { d: p.icon })],
  )
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

export const AppCellChip: FunctionalComponent<CellChipProps> = (p, { slots }) =>
  h('span', cellChipLook(p), [
    p.icon ? h(AppCellIcon, { icon: p.icon, size: 16, class: 'app-cell-chip__icon' }) : null,
    slots.default?.(),
  ])
AppCellChip.props = {
  color: String,
  variant: String as PropType<CellChipProps['variant']>,
  label: Boolean,
  icon: String,
}
