/**
 * The uPlot side of SignaturePlot: builds an XY (mode 2) chart of closed V-I loops inside an
 * element and keeps it sized, themed and in step with the component's view. Browser only: uPlot is
 * loaded with a dynamic import so nothing here runs during server rendering.
 */
import type uPlot from 'uplot';
import { closeCurve, ticks, tickLabels, type FullScale, type Range } from './plot-scale';

export type CurveRole = 'fault' | 'known-good' | 'other' | 'query';

export interface PlotCurve {
	label: string;
	role: CurveRole;
	/** Volts, SI. */
	v: number[];
	/** Amperes, SI. */
	i: number[];
}

export interface View {
	v: Range;
	i: Range;
}

export interface Chart {
	setView(view: View): void;
	destroy(): void;
}

/** CSS variable that colours each role; read at draw time so a theme change recolours the plot. */
export const ROLE_COLOUR: Record<CurveRole, string> = {
	fault: '--cl-trace-fault',
	'known-good': '--cl-trace-good',
	other: '--cl-trace-other',
	query: '--cl-ink'
};

/**
 * Dash pattern per curve, in CSS pixels: the query curve is dashed so it stays apart from the
 * stored ones, and a second curve of the same role gets a different dash.
 */
export function curveDash(curves: readonly PlotCurve[], index: number): number[] {
	const sameRoleBefore = curves.slice(0, index).filter((c) => c.role === curves[index].role).length;
	const patterns: number[][] = [[], [8, 4], [2, 3], [10, 3, 2, 3]];
	const base = curves[index].role === 'query' ? 1 : 0;
	return patterns[(base + sameRoleBefore) % patterns.length];
}

// Pixels of axis length per tick label: enough room for "-10.0 mA" (common practice, no source).
const PX_PER_TICK_X = 80;
const PX_PER_TICK_Y = 48;

export async function mountChart(
	el: HTMLElement,
	curves: readonly PlotCurve[],
	full: FullScale,
	height: number,
	onView: (view: View) => void
): Promise<Chart> {
	const { default: UPlot } = await import('uplot');
	const style = getComputedStyle(el);
	const palette = new Map<string, string>();
	const colour = (name: string) => palette.get(name) ?? (style.getPropertyValue(name).trim() || 'currentColor');
	const refreshPalette = () => {
		palette.clear();
		for (const name of [...Object.values(ROLE_COLOUR), '--cl-muted', '--cl-line', '--cl-ink']) {
			palette.set(name, getComputedStyle(el).getPropertyValue(name).trim());
		}
	};
	refreshPalette();

	const loopPath: uPlot.Series.PathBuilder = (u, seriesIdx) => {
		const [xs, ys] = u.data[seriesIdx] as unknown as [number[], number[]];
		const stroke = new Path2D();
		for (let k = 0; k < xs.length; k++) {
			const x = u.valToPos(xs[k], 'x', true);
			const y = u.valToPos(ys[k], 'y', true);
			if (k === 0) stroke.moveTo(x, y);
			else stroke.lineTo(x, y);
		}
		const clip = new Path2D();
		clip.rect(u.bbox.left, u.bbox.top, u.bbox.width, u.bbox.height);
		return { stroke, fill: null, clip, flags: 0 };
	};

	const drawZeroAxes = (u: uPlot) => {
		const { ctx, bbox } = u;
		const x0 = u.valToPos(0, 'x', true);
		const y0 = u.valToPos(0, 'y', true);
		ctx.save();
		ctx.strokeStyle = colour('--cl-muted');
		ctx.lineWidth = 1.5 * UPlot.pxRatio;
		ctx.beginPath();
		if (x0 >= bbox.left && x0 <= bbox.left + bbox.width) {
			ctx.moveTo(x0, bbox.top);
			ctx.lineTo(x0, bbox.top + bbox.height);
		}
		if (y0 >= bbox.top && y0 <= bbox.top + bbox.height) {
			ctx.moveTo(bbox.left, y0);
			ctx.lineTo(bbox.left + bbox.width, y0);
		}
		ctx.stroke();
		ctx.restore();
	};

	const axis = (scale: 'x' | 'y', unit: string, pxPerTick: number): uPlot.Axis => ({
		scale,
		stroke: () => colour('--cl-muted'),
		grid: { stroke: () => colour('--cl-line'), width: 1 },
		ticks: { stroke: () => colour('--cl-line'), width: 1 },
		size: scale === 'y' ? 72 : 44,
		splits: (u, _axisIdx, min, max) => {
			const length = (scale === 'x' ? u.bbox.width : u.bbox.height) / UPlot.pxRatio;
			return ticks([min, max], Math.max(3, Math.floor(length / pxPerTick)));
		},
		values: (_u, splits) => tickLabels(splits, unit)
	});

	const reportView = (u: uPlot) => {
		const x = u.scales.x;
		const y = u.scales.y;
		if (x.min != null && x.max != null && y.min != null && y.max != null) {
			onView({ v: [x.min, x.max], i: [y.min, y.max] });
		}
	};

	const opts: uPlot.Options = {
		mode: 2,
		width: Math.max(200, el.clientWidth),
		height,
		legend: { show: false },
		cursor: {
			drag: { x: true, y: true, setScale: true },
			points: { show: false },
			bind: {
				// Double-click returns to full scale (uPlot's own reset would fit the data instead).
				dblclick: () => () => {
					setView({ v: full.v, i: full.i });
					return null;
				}
			}
		},
		scales: {
			x: { time: false, auto: false, min: full.v[0], max: full.v[1] },
			y: { auto: false, min: full.i[0], max: full.i[1] }
		},
		axes: [axis('x', 'V', PX_PER_TICK_X), axis('y', 'A', PX_PER_TICK_Y)],
		series: [
			{},
			...curves.map((c, index) => ({
				label: c.label,
				facets: [
					{ scale: 'x', auto: false },
					{ scale: 'y', auto: false }
				],
				stroke: () => colour(ROLE_COLOUR[c.role]),
				width: 2,
				dash: curveDash(curves, index),
				paths: loopPath,
				points: { show: false }
			}))
		],
		hooks: {
			drawClear: [refreshPalette],
			drawAxes: [drawZeroAxes],
			// Drag-zoom sets x then y; each reports, and the last report is the whole new view.
			setScale: [(u: uPlot) => reportView(u)]
		}
	};

	const data = [null, ...curves.map((c) => closeCurve(c.v, c.i))] as unknown as uPlot.AlignedData;
	const chart = new UPlot(opts, data, el);

	function setView(view: View) {
		chart.batch(() => {
			chart.setScale('x', { min: view.v[0], max: view.v[1] });
			chart.setScale('y', { min: view.i[0], max: view.i[1] });
		});
	}

	const resize = new ResizeObserver(() => {
		const width = Math.max(200, el.clientWidth);
		if (width !== chart.width) chart.setSize({ width, height });
	});
	resize.observe(el);

	// Dark mode follows the system setting or a data-theme attribute on <html>; redraw on either.
	const redraw = () => chart.redraw(false);
	const scheme = matchMedia('(prefers-color-scheme: dark)');
	scheme.addEventListener('change', redraw);
	const themeObserver = new MutationObserver(redraw);
	themeObserver.observe(document.documentElement, { attributes: true, attributeFilter: ['data-theme', 'class'] });

	return {
		setView,
		destroy() {
			resize.disconnect();
			scheme.removeEventListener('change', redraw);
			themeObserver.disconnect();
			chart.destroy();
		}
	};
}
