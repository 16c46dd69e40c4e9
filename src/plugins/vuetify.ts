/**
 * plugins/vuetify.ts — Limitkeeper's own theme, Roboto from @fontsource and SVG icons from @mdi/js (nothing from a
 * CDN), the look every instance of a component shares (`defaults`; an instance states only where it differs) and the
 * action buttons by their role (`aliases`, written `<v-btn-primary>` and so on in templates).
 */
import '@fontsource/roboto/latin-400.css'
import '@fontsource/roboto/latin-500.css'
import '@fontsource/roboto/latin-700.css'
import 'vuetify/styles'
import { createVuetify, type VuetifyOptions } from 'vuetify'
import { VBtn } from 'vuetify/components/VBtn'
import { aliases as iconAliases, mdi } from 'vuetify/iconsets/mdi-svg'

const button = { rounded: 'md' }

/** The app's Vuetify configuration; the component tests mount with it too. */
export const vuetifyOptions: VuetifyOptions = {
  icons: { defaultSet: 'mdi', aliases: iconAliases, sets: { mdi } },
  theme: {
    defaultTheme: 'limitkeeper',
    themes: {
      limitkeeper: {
        dark: false,
        colors: {
          primary: '#1d4f6e',
          secondary: '#4a5d68',
          accent: '#f2b705',
          error: '#b3261e',
          warning: '#a15c00',
          info: '#2f6690',
          success: '#2e7d32',
          background: '#f4f6f7',
          surface: '#ffffff',
        },
      },
    },
  },
  defaults: {
    VTextField: { variant: 'outlined', density: 'comfortable' },
    VSelect: { variant: 'outlined', density: 'comfortable' },
    VAutocomplete: { variant: 'outlined', density: 'comfortable' },
    VTextarea: { variant: 'outlined', density: 'comfortable', autoGrow: true, rows: 2 },
    VCard: { rounded: 'lg' },
    VAlert: { variant: 'tonal' },
    VBtn: button,
    // an alias takes only its own defaults, not those of VBtn
    VBtnPrimary: { ...button, color: 'primary', variant: 'flat' },
    VBtnSecondary: { ...button, color: 'primary', variant: 'tonal' },
    VBtnDanger: { ...button, color: 'error', variant: 'flat' },
    VBtnIcon: { ...button, variant: 'text', size: 'small' },
  },
  aliases: {
    /** The main action of a screen, form or panel: save, submit, create, run. */
    VBtnPrimary: VBtn,
    /** An action beside the main one, or the action of a panel: add, compute, download, open its dialog. */
    VBtnSecondary: VBtn,
    /** An action that removes, refuses or accepts a risk: delete, withdraw, decline, sign degraded protection. */
    VBtnDanger: VBtn,
    /** The icon button of a row or list entry (edit, remove, open), named by its aria-label. */
    VBtnIcon: VBtn,
  },
}

export default createVuetify(vuetifyOptions)

declare module 'vue' {
  export interface GlobalComponents {
    VBtnPrimary: typeof VBtn
    VBtnSecondary: typeof VBtn
    VBtnDanger: typeof VBtn
    VBtnIcon: typeof VBtn
  }
}
