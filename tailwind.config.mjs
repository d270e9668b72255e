/** @type {import('tailwindcss').Config} */
export default {
  content: ['./src/**/*.{astro,html,js,jsx,ts,tsx}'],
  darkMode: ['class', '[data-theme="dark"]'],
  theme: {
    extend: {
      colors: {
        paper: 'rgb(var(--paper) / <alpha-value>)',
        ink: 'rgb(var(--ink) / <alpha-value>)',
        panel: 'rgb(var(--panel) / <alpha-value>)',
        rule: 'rgb(var(--rule) / <alpha-value>)',
        muted: 'rgb(var(--muted) / <alpha-value>)',
        gallium: '#5B7C99',
        copper: '#B8734A',
        nominal: '#2F8F6B',
        caution: '#C98A00',
        warning: '#C23B22',
        stale: '#8A8F98',
      },
      fontFamily: { sans: ['"Inter Tight"', 'system-ui', 'sans-serif'] },
      height: { row: '32px' },
    },
  },
  plugins: [],
};
