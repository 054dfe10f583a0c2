import type { Config } from 'tailwindcss';

/**
 * Lamina's design tokens. Warm neutral surfaces ("bone"), dark readable ink, one accent of
 * Lamina's own (a deep indigo, "dura"), and state colours that always travel with a word and
 * an icon, never alone. Contrast of ink and dura on bone and white is above WCAG AA 4.5:1.
 */
const config: Config = {
  content: ['./app/**/*.{ts,tsx}', './components/**/*.{ts,tsx}', './lib/**/*.{ts,tsx}'],
  theme: {
    extend: {
      colors: {
        bone: { 50: '#fbfaf7', 100: '#f6f3ee', 200: '#ece6dc', 300: '#ddd4c6', 400: '#b9ad9b' },
        ink: { 900: '#1d2225', 700: '#3a4146', 500: '#5b6166', 400: '#63696e' },
        dura: { 50: '#efeefa', 100: '#dcd9f3', 300: '#9c95d6', 500: '#5a51a8', 600: '#4a4290', 700: '#3a3470', 800: '#2c2855' },
        state: {
          ok: '#23683f',
          okBg: '#e3f1e7',
          watch: '#8a5a00',
          watchBg: '#fbefd5',
          alert: '#a1262c',
          alertBg: '#f9e1e1',
          info: '#1f5a85',
          infoBg: '#e1edf7',
        },
      },
      fontFamily: {
        sans: ['var(--font-sans)', 'system-ui', 'sans-serif'],
        serif: ['var(--font-serif)', 'Georgia', 'serif'],
      },
      fontSize: {
        xs: ['0.75rem', { lineHeight: '1.1rem' }],
        sm: ['0.875rem', { lineHeight: '1.35rem' }],
        base: ['1rem', { lineHeight: '1.6rem' }],
        lg: ['1.125rem', { lineHeight: '1.7rem' }],
        xl: ['1.375rem', { lineHeight: '1.9rem' }],
        '2xl': ['1.75rem', { lineHeight: '2.2rem' }],
        '3xl': ['2.25rem', { lineHeight: '2.6rem' }],
      },
      borderRadius: { sm: '4px', DEFAULT: '6px', md: '8px', lg: '12px', xl: '16px' },
      boxShadow: { card: '0 1px 2px rgba(29,34,37,0.06), 0 1px 8px rgba(29,34,37,0.04)' },
    },
  },
};

export default config;
