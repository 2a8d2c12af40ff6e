import type { Config } from 'tailwindcss'
import defaultTheme from 'tailwindcss/defaultTheme'

// Conetrail's own theme: warm paper, dark ink, copper accent (the voice-coil wire), and two
// unmistakable verdict colours with text labels beside them (never colour alone).
export default {
  content: [
    './components/**/*.{vue,ts}',
    './layouts/**/*.vue',
    './pages/**/*.vue',
    './app.vue',
    './error.vue',
    './composables/**/*.ts',
    './shared/**/*.ts',
  ],
  theme: {
    extend: {
      colors: {
        paper: { DEFAULT: '#f5f3ee', raised: '#ffffff', sunk: '#e9e5dc' },
        ink: { DEFAULT: '#141c24', soft: '#3b4754', faint: '#6b7785' },
        copper: { DEFAULT: '#a8541f', light: '#f3e2d3', dark: '#7a3a12' },
        steel: { DEFAULT: '#4c5d6e', light: '#d9dfe5' },
        verdict: { pass: '#0a6b36', passBg: '#dff3e6', fail: '#a3160e', failBg: '#fbe1de', none: '#5c5f66', retest: '#1d4a85', retestBg: '#e2ebf7' },
      },
      fontFamily: {
        sans: ['"Source Sans 3"', ...defaultTheme.fontFamily.sans],
        mono: ['"JetBrains Mono"', ...defaultTheme.fontFamily.mono],
      },
      fontSize: {
        verdict: ['4.5rem', { lineHeight: '1', fontWeight: '700' }],
      },
    },
  },
  plugins: [],
} satisfies Config
