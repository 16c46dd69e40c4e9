/**
 * plugins/vuetify.ts — Limitkeeper's own theme, Roboto from @fontsource and SVG icons from @mdi/js (nothing from a
 * CDN).
 */
import '@fontsource/roboto/latin-400.css'
import '@fontsource/roboto/latin-500.css'
import '@fontsource/roboto/latin-700.css'
import 'vuetify/styles'
import { createVuetify } from 'vuetify'
import { aliases, mdi } from 'vuetify/iconsets/mdi-svg'

export default createVuetify({
  icons: { defaultSet: 'mdi', aliases, sets: { mdi } },
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
    VTextarea: { variant: 'outlined', density: 'comfortable' },
    VCard: { rounded: 'lg' },
    VBtn: { rounded: 'md' },
  },
})
