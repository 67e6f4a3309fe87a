import type { Config } from 'tailwindcss';

/**
 * Curvelore's design tokens. Colours are semantic and backed by CSS variables (defined in
 * src/app.css for the light theme and the dark one), so components never name a raw colour.
 */
const token = (name: string) => `var(--cl-${name})`;

export default {
	content: ['./src/**/*.{html,svelte,ts}'],
	theme: {
		extend: {
			colors: {
				canvas: token('canvas'), // page background behind everything
				surface: token('surface'), // cards, panels, inputs
				sunken: token('sunken'), // wells: code, table stripes, plot background
				ink: token('ink'), // body text and headings
				muted: token('muted'), // secondary text, captions (AA on canvas and surface)
				line: token('line'), // borders and rules
				primary: token('primary'), // links, primary buttons, focus ring
				'primary-ink': token('primary-ink'), // text on a primary background
				'primary-soft': token('primary-soft'), // selected rows, active navigation
				caution: token('caution'), // safety caution background
				'caution-line': token('caution-line'), // safety caution border and icon
				'caution-ink': token('caution-ink'), // safety caution text
				danger: token('danger'), // destructive actions and errors
				success: token('success'), // confirmations
				'trace-fault': token('trace-fault'), // the faulty curve in plots
				'trace-good': token('trace-good'), // the known-good curve in plots
				'trace-other': token('trace-other') // any further curve in plots
			},
			fontFamily: {
				sans: ['"Atkinson Hyperlegible Next Variable"', 'ui-sans-serif', 'system-ui', 'sans-serif'],
				mono: ['"Atkinson Hyperlegible Mono Variable"', 'ui-monospace', 'monospace']
			},
			// A modest scale: technicians read at arm's length from a bench.
			fontSize: {
				xs: ['0.8125rem', { lineHeight: '1.25rem' }],
				sm: ['0.9375rem', { lineHeight: '1.4rem' }],
				base: ['1.0625rem', { lineHeight: '1.65rem' }],
				lg: ['1.25rem', { lineHeight: '1.8rem' }],
				xl: ['1.5rem', { lineHeight: '2rem' }],
				'2xl': ['1.875rem', { lineHeight: '2.35rem' }],
				'3xl': ['2.375rem', { lineHeight: '2.8rem' }]
			},
			spacing: {
				gutter: '1.25rem' // page side padding on small screens
			},
			maxWidth: {
				content: '72rem' // widest text column
			},
			borderRadius: {
				card: '0.625rem'
			}
		}
	}
} satisfies Config;
