/**
 * Every chart of the panel, drawn by uPlot. This is the ONLY file that imports uplot: its data shapes and options
 * stay here, so a change of library touches one file.
 *
 * Conventions: x in seconds (log time base) with `time: false`; for log-log charts x is tau in seconds; for planar
 * charts x/y are metres. Gaps are `null` (uPlot ignores NaN only by accident: it checks `== null`), made by
 * shape.ts. Colours are read from the theme's CSS variables at draw time, so a theme switch needs only a redraw.
 */
import uPlot from 'uplot';
import { equalAspect, fitText, gapsToNull, positiveOrNull } from './shape';

/** Colours of the current theme (CSS colour strings). */
export interface Theme {
  foreground: string;
  grid: string;
  line: string;
  band: string;
  bandFill: string;
  marker: string;
  selected: string;
  reference: string;
  points: string;
  /** One colour per compared run (A, B, C ...), cycled. */
  runs: string[];
}

function cssVar(style: CSSStyleDeclaration, name: string, fallback: string): string {
  const v = style.getPropertyValue(name).trim();
  return v === '' ? fallback : v;
}

/** `color` with alpha `a` when it is #rgb, #rrggbb or rgb(); unchanged otherwise. */
export function withAlpha(color: string, a: number): string {
  const hex = /^#([0-9a-f]{3}|[0-9a-f]{6})$/i.exec(color);
  if (hex) {
    const h = hex[1].length === 3 ? [...hex[1]].map((c) => c + c).join('') : hex[1];
    const n = parseInt(h, 16);
    return `rgba(${(n >> 16) & 255}, ${(n >> 8) & 255}, ${n & 255}, ${a})`;
  }
  const rgb = /^rgba?\(([^,]+),([^,]+),([^,)]+)/i.exec(color);
  return rgb ? `rgba(${rgb[1].trim()}, ${rgb[2].trim()}, ${rgb[3].trim()}, ${a})` : color;
}

/** Read the theme colours from the VS Code CSS variables (charts palette, editor foreground). */
export function readTheme(): Theme {
  const s = getComputedStyle(document.body);
  const foreground = cssVar(s, '--vscode-editor-foreground', '#cccccc');
  const band = cssVar(s, '--vscode-charts-green', '#89d185');
  return {
    foreground,
    grid: withAlpha(cssVar(s, '--vscode-charts-lines', foreground), 0.25),
    line: cssVar(s, '--vscode-charts-blue', '#3794ff'),
    band,
    bandFill: withAlpha(band, 0.15),
    marker: cssVar(s, '--vscode-charts-red', '#f14c4c'),
    selected: cssVar(s, '--vscode-charts-orange', '#d18616'),
    reference: cssVar(s, '--vscode-charts-purple', '#b180d7'),
    points: cssVar(s, '--vscode-charts-yellow', '#cca700'),
    runs: [
      cssVar(s, '--vscode-charts-blue', '#3794ff'),
      cssVar(s, '--vscode-charts-orange', '#d18616'),
      cssVar(s, '--vscode-charts-green', '#89d185'),
      cssVar(s, '--vscode-charts-purple', '#b180d7'),
      cssVar(s, '--vscode-charts-red', '#f14c4c'),
      cssVar(s, '--vscode-charts-yellow', '#cca700'),
    ],
  };
}

/** Height of a chart's plot, CSS pixels. */
const HEIGHT_PX = 200;
/** Height of a planar (trajectory) chart, CSS pixels. */
const XY_HEIGHT_PX = 360;

/** Options of a chart over time (or tau, for log-log). */
export interface TimeChartOptions {
  label: string;
  /** The series' name in the legend (shape.ts legendLabel); the label when absent. */
  legend?: string;
  unit: string;
  /** The y axis's label (shape.ts yAxisLabel: the unit, or a short name of the quantity). */
  axisLabel: string;
  /** 'time': linked cursor, zoom and pan; 'loglog': Allan deviation; 'plain': another abscissa (lags, bins). */
  kind: 'time' | 'loglog' | 'plain';
  band: boolean;
  /** Full x extent [x0, x1] of the series. */
  extent: [number, number];
  /** x values marked by vertical lines (bias steps, worst updates). */
  markers: number[];
  /** Times of the log's notes, read at each draw (dotted lines; webview/notes.ts). */
  noteMarkers?: () => readonly number[];
  /** Cursor sync key shared by the linked charts. */
  syncKey: string;
  /** The user zoomed or panned (time charts): the new window. */
  onWindow?: (t0: number, t1: number) => void;
  /** The user clicked at x (time charts). */
  onPick?: (t: number) => void;
}

/**
 * An axis in the theme's colours. Its label is fitted at each draw to the length of the plotting area along the axis
 * (shortened with an ellipsis): a rotated y label longer than the plot's height would otherwise be cut by the canvas.
 */
function axis(theme: () => Theme, label: string, log = false): uPlot.Axis {
  return {
    label: label === '' ? undefined : (u, axisIdx) => {
      // uPlot has set the label font on the context before it asks for the text; bbox and widths are device pixels.
      const along = u.axes[axisIdx]?.side === 1 || u.axes[axisIdx]?.side === 3 ? u.bbox.height : u.bbox.width;
      return fitText(label, along, (s) => u.ctx.measureText(s).width);
    },
    stroke: () => theme().foreground,
    grid: { stroke: () => theme().grid, width: 1 },
    ticks: { stroke: () => theme().grid, width: 1 },
    ...(log ? { values: (_u: uPlot, splits: number[]) => splits.map((v) => (v == null ? '' : v.toExponential(0))) } : {}),
  };
}

/** Vertical lines at `xs` and at the selected x, drawn on the plot after the series. */
function drawMarkers(u: uPlot, xs: readonly number[], selected: number | undefined, theme: Theme, notes: readonly number[] = []): void {
  const { ctx } = u;
  const { top, height } = u.bbox;
  const line = (x: number, color: string, dash: number[]): void => {
    const px = u.valToPos(x, 'x', true);
    if (!(px >= u.bbox.left && px <= u.bbox.left + u.bbox.width)) return;
    ctx.save();
    ctx.strokeStyle = color;
    ctx.lineWidth = devicePixelRatio;
    ctx.setLineDash(dash.map((d) => d * devicePixelRatio));
    ctx.beginPath();
    ctx.moveTo(px, top);
    ctx.lineTo(px, top + height);
    ctx.stroke();
    ctx.restore();
  };
  for (const x of xs) line(x, theme.marker, [4, 3]);
  for (const x of notes) line(x, theme.points, [1, 2]);
  if (selected !== undefined) line(selected, theme.selected, []);
}

/** Auto range with uPlot's own padding, and a fixed fallback when the data hold no finite value. */
function safeRange(log: boolean): uPlot.Range.Function {
  return (_u, min, max) => {
    if (min == null || max == null || !Number.isFinite(min) || !Number.isFinite(max)) return log ? [1e-3, 1] : [0, 1];
    return log ? uPlot.rangeLog(min, max, 10, true) : uPlot.rangeNum(min, max, 0.1, true);
  };
}

/**
 * What the charts made on their first data share: the uPlot instance (undefined until then), the width in CSS pixels,
 * the points drawn, and resize, redraw and release.
 */
abstract class PlotChart {
  protected plot: uPlot | undefined;
  /** Points drawn by the last data. */
  points = 0;

  protected constructor(protected width: number) {}

  /** New width in CSS pixels. */
  resize(width: number): void {
    this.width = width;
    this.plot?.setSize({ width, height: HEIGHT_PX });
  }

  /** Redraw with the current theme. */
  redraw(): void {
    this.plot?.redraw(false);
  }

  /** Release the chart. */
  destroy(): void {
    this.plot?.destroy();
    this.plot = undefined;
  }
}

/**
 * A chart of one series over time, with an optional band, markers, a linked cursor and window re-queries.
 * The uPlot instance is made on the first data (an empty plot has no axis range to draw).
 */
export class TimeChart extends PlotChart {
  private selected: number | undefined;
  private programmatic = false;
  private window: [number, number];

  constructor(private readonly container: HTMLElement, private readonly options: TimeChartOptions, width: number, private readonly theme: () => Theme) {
    super(width);
    this.window = options.extent;
  }

  private makePlot(data: uPlot.AlignedData): uPlot {
    const { options, theme } = this;
    const isTime = options.kind === 'time';
    const isLog = options.kind === 'loglog';
    const series: uPlot.Series[] = [
      { label: isTime ? 't [s]' : isLog ? 'tau [s]' : 'x' },
      { label: options.legend ?? options.label, stroke: () => theme().line, width: 1, points: { show: false }, spanGaps: false },
    ];
    const bands: uPlot.Band[] = [];
    if (options.band) {
      series.push(
        { label: 'upper', stroke: () => theme().band, width: 1, dash: [5, 3], points: { show: false } },
        { label: 'lower', stroke: () => theme().band, width: 1, dash: [5, 3], points: { show: false } },
      );
      bands.push({ series: [2, 3], fill: () => theme().bandFill });
    }
    const opts: uPlot.Options = {
      width: this.width,
      height: HEIGHT_PX,
      series,
      bands,
      scales: {
        x: isTime ? { time: false, auto: false, min: this.window[0], max: this.window[1] } : isLog ? { time: false, distr: 3, log: 10, range: safeRange(true) } : { time: false, range: safeRange(false) },
        y: isLog ? { distr: 3, log: 10, range: safeRange(true) } : { auto: true, range: safeRange(false) },
      },
      axes: [axis(theme, isTime ? 't [s]' : isLog ? 'tau [s]' : '', isLog), axis(theme, options.axisLabel, isLog)],
      legend: { show: true, live: isTime },
      cursor: isTime
        ? {
            sync: { key: options.syncKey, setSeries: false },
            drag: { x: true, y: false, setScale: true },
            bind: {
              dblclick: () => () => {
                this.userWindow(this.options.extent);
                return null;
              },
            },
          }
        : { drag: { x: false, y: false } },
      hooks: {
        draw: [(u) => drawMarkers(u, options.markers, this.selected, theme(), isTime ? options.noteMarkers?.() : undefined)],
        setScale: [
          (u, key) => {
            if (key !== 'x' || this.programmatic || !isTime) return;
            const { min, max } = u.scales.x;
            if (min == null || max == null || !(max > min)) return;
            // uPlot commits scale changes in a microtask, so our own setScale calls arrive here too: a window equal
            // to the one we set is not a user's zoom (answering it would re-query forever).
            const tol = 1e-9 * (max - min);
            if (Math.abs(min - this.window[0]) <= tol && Math.abs(max - this.window[1]) <= tol) return;
            this.window = [min, max];
            options.onWindow?.(min, max);
          },
        ],
      },
    };
    this.programmatic = true;
    let plot: uPlot;
    try {
      plot = new uPlot(opts, data, this.container);
    } finally {
      this.programmatic = false;
    }
    if (isTime && options.onPick) {
      const pick = options.onPick;
      plot.over.addEventListener('click', (e) => {
        const rect = plot.over.getBoundingClientRect();
        const t = plot.posToVal(e.clientX - rect.left, 'x');
        if (Number.isFinite(t)) pick(t);
      });
    }
    return plot;
  }

  /** The visible window [t0, t1]. */
  visibleWindow(): [number, number] {
    return this.window;
  }

  /** Width of the plotting area in CSS pixels (the number of envelope buckets to ask for). */
  plotWidthPx(): number {
    const w = this.plot ? this.plot.bbox.width / devicePixelRatio : 0;
    return Math.max(1, Math.round(w > 0 ? w : this.width - 70));
  }

  /** Draw new columns (an envelope of the visible window); returns the number of points drawn. */
  setData(x: Float64Array, y: Float64Array, lo?: Float64Array, hi?: Float64Array): number {
    const log = this.options.kind === 'loglog';
    const conv = log ? positiveOrNull : gapsToNull;
    const data: uPlot.AlignedData = [x, conv(y)];
    if (this.options.band) {
      data.push(hi ? conv(hi) : new Array<null>(x.length).fill(null));
      data.push(lo ? conv(lo) : new Array<null>(x.length).fill(null));
    }
    if (!this.plot) {
      this.plot = this.makePlot(data);
    } else {
      this.programmatic = true;
      try {
        this.plot.setData(data, true);
        if (this.options.kind === 'time') this.plot.setScale('x', { min: this.window[0], max: this.window[1] });
      } finally {
        this.programmatic = false;
      }
    }
    this.points = x.length;
    return this.points;
  }

  /** Show [t0, t1] without telling `onWindow` (linked zoom, restore). */
  setWindow(t0: number, t1: number): void {
    if (!(t1 > t0)) return;
    this.window = [t0, t1];
    if (!this.plot) return;
    this.programmatic = true;
    try {
      this.plot.setScale('x', { min: t0, max: t1 });
    } finally {
      this.programmatic = false;
    }
  }

  /** Show [t0, t1] as if the user chose it (keyboard zoom and pan): `onWindow` is told. */
  userWindow(window: [number, number]): void {
    this.setWindow(window[0], window[1]);
    this.options.onWindow?.(window[0], window[1]);
  }

  /** Mark the selected time and move the cursor there. */
  select(t: number | undefined): void {
    if (this.options.kind !== 'time') return;
    this.selected = t;
    if (!this.plot) return;
    if (t !== undefined && this.options.kind === 'time') {
      const left = this.plot.valToPos(t, 'x');
      if (Number.isFinite(left)) this.plot.setCursor({ left, top: this.plot.bbox.height / devicePixelRatio / 2 });
    }
    this.plot.redraw(false);
  }
}

/** One layer of a planar chart. */
export interface XyLayer {
  label: string;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** 'path': a polyline; 'points': small circles; 'marks': larger rings (worst epochs). */
  style: 'path' | 'points' | 'marks';
  color: (t: Theme) => string;
}

/** Path builder for uPlot's planar mode: a polyline, dots or rings through the facet data. */
function planarPaths(style: XyLayer['style']): uPlot.Series.PathBuilder {
  return (u, seriesIdx) => {
    const facet = u.data[seriesIdx] as unknown as [ArrayLike<number>, ArrayLike<number>];
    const xs = facet[0];
    const ys = facet[1];
    const path = new Path2D();
    const r = (style === 'marks' ? 6 : 3) * devicePixelRatio;
    let open = false;
    for (let i = 0; i < xs.length; i++) {
      const xv = xs[i];
      const yv = ys[i];
      if (xv == null || yv == null || !Number.isFinite(xv) || !Number.isFinite(yv)) {
        open = false;
        continue;
      }
      const px = u.valToPos(xv, 'x', true);
      const py = u.valToPos(yv, 'y', true);
      if (style === 'path') {
        if (open) path.lineTo(px, py);
        else path.moveTo(px, py);
        open = true;
      } else {
        path.moveTo(px + r, py);
        path.arc(px, py, r, 0, 2 * Math.PI);
      }
    }
    return { stroke: path, fill: style === 'points' ? path : undefined, clip: undefined, flags: 0 };
  };
}

/**
 * A trajectory seen from above (x east, y north, equal metres per pixel) with point layers, and a key under the plot
 * naming each layer with its colour and style (uPlot's own legend does not serve planar charts).
 */
export class XyChart extends PlotChart {
  private layers: XyLayer[] = [];
  private readonly plotHost: HTMLElement;
  private readonly key: HTMLElement;

  constructor(container: HTMLElement, private readonly unit: string, width: number, private readonly theme: () => Theme) {
    super(width);
    this.plotHost = document.createElement('div');
    this.key = document.createElement('ul');
    this.key.className = 'xy-key';
    container.append(this.plotHost, this.key);
  }

  /** The key's entries for the current layers, coloured by the current theme. */
  private drawKey(): void {
    const theme = this.theme();
    this.key.replaceChildren(
      ...this.layers.map((l) => {
        const swatch = document.createElement('span');
        swatch.className = `swatch swatch-${l.style}`;
        swatch.style.setProperty('--swatch', l.color(theme));
        const item = document.createElement('li');
        item.append(swatch, document.createTextNode(l.label));
        return item;
      }),
    );
  }

  /** Redraw (and recolour the key) with the current theme. */
  override redraw(): void {
    this.drawKey();
    super.redraw();
  }

  /** Draw `layers` (replaces the previous ones); returns the number of points drawn. */
  setLayers(layers: XyLayer[]): number {
    this.layers = layers;
    this.plot?.destroy();
    const theme = this.theme;
    const series: uPlot.Series[] = [{}];
    const data: unknown[] = [null];
    let xMin = Infinity;
    let xMax = -Infinity;
    let yMin = Infinity;
    let yMax = -Infinity;
    this.points = 0;
    for (const l of layers) {
      series.push({
        label: l.label,
        stroke: () => l.color(theme()),
        fill: l.style === 'points' ? () => l.color(theme()) : undefined,
        width: l.style === 'marks' ? 2 : 1,
        paths: planarPaths(l.style),
        facets: [
          { scale: 'x', auto: true },
          { scale: 'y', auto: true },
        ],
      });
      data.push([gapsToNull(l.x), gapsToNull(l.y)]);
      for (let i = 0; i < l.x.length; i++) {
        const xv = l.x[i];
        const yv = l.y[i];
        if (!Number.isFinite(xv) || !Number.isFinite(yv)) continue;
        xMin = Math.min(xMin, xv);
        xMax = Math.max(xMax, xv);
        yMin = Math.min(yMin, yv);
        yMax = Math.max(yMax, yv);
        this.points++;
      }
    }
    if (xMin === Infinity) return 0;
    const plotW = Math.max(50, this.width - 80);
    const plotH = XY_HEIGHT_PX - 60;
    const ranges = equalAspect(xMin, xMax, yMin, yMax, plotW, plotH);
    const unit = this.unit ? ` [${this.unit}]` : '';
    this.plot = new uPlot(
      {
        mode: 2,
        width: this.width,
        height: XY_HEIGHT_PX,
        series,
        scales: {
          x: { time: false, auto: false, range: () => ranges.x },
          y: { auto: false, range: () => ranges.y },
        },
        axes: [axis(theme, `x (east)${unit}`), axis(theme, `y (north)${unit}`)],
        legend: { show: false },
        cursor: { show: false, drag: { x: false, y: false } },
      },
      data as uPlot.AlignedData,
      this.plotHost,
    );
    this.drawKey();
    return this.points;
  }

  /** New width in CSS pixels (re-fits the equal-aspect ranges). */
  override resize(width: number): void {
    this.width = width;
    if (this.layers.length) this.setLayers(this.layers);
  }
}

/** A NIS histogram (bars) with the chi-square expectation (line) over bin centres. */
export class HistogramChart {
  private readonly plot: uPlot;
  /** Bins drawn. */
  points = 0;

  constructor(container: HTMLElement, label: string, width: number, theme: () => Theme) {
    const bars = uPlot.paths.bars ? uPlot.paths.bars({ size: [0.9, Infinity], align: 0 }) : undefined;
    this.plot = new uPlot(
      {
        width,
        height: HEIGHT_PX,
        series: [
          { label },
          { label: 'count', stroke: () => theme().line, fill: () => withAlpha(theme().line, 0.35), paths: bars, points: { show: false } },
          { label: 'chi-square expectation', stroke: () => theme().band, width: 2, points: { show: false } },
        ],
        scales: { x: { time: false }, y: { auto: true, range: (_u, _min, max) => [0, max != null && max > 0 ? max * 1.05 : 1] } },
        axes: [axis(theme, label), axis(theme, 'count')],
        legend: { show: true, live: true },
        cursor: { drag: { x: false, y: false } },
      },
      [[], [], []],
      container,
    );
  }

  /** Draw bins (`edges.length === counts.length + 1`). */
  setBins(edges: readonly number[], counts: readonly number[], expected: readonly number[]): number {
    const centres = counts.map((_, i) => (edges[i] + edges[i + 1]) / 2);
    this.plot.setData([centres, [...counts], [...expected]]);
    this.points = counts.length;
    return this.points;
  }

  /** New width in CSS pixels. */
  resize(width: number): void {
    this.plot.setSize({ width, height: HEIGHT_PX });
  }

  /** Redraw with the current theme. */
  redraw(): void {
    this.plot.redraw(false);
  }

  /** Release the chart. */
  destroy(): void {
    this.plot.destroy();
  }
}

/** Options of an overlay of several runs' curves on one time axis. */
export interface OverlayChartOptions {
  label: string;
  unit: string;
  /** Legend label of each curve (e.g. `A warehouse-a.csv`), and its run index (for the colour). */
  curves: { label: string; run: number }[];
  /** Cursor sync key shared by the overlays of one view. */
  syncKey: string;
}

/**
 * Curves of the same quantity from several runs over one (common) time axis: one coloured line per run, drag to
 * zoom, double click to reset. Data come merged on one x column (null where a run has no point).
 */
export class OverlayChart extends PlotChart {
  constructor(private readonly container: HTMLElement, private readonly options: OverlayChartOptions, width: number, private readonly theme: () => Theme) {
    super(width);
  }

  /** Draw `x` with one y column per curve; returns the number of points drawn (non-null values). */
  setData(x: readonly number[], ys: readonly (readonly (number | null)[])[]): number {
    const { options, theme } = this;
    this.plot?.destroy();
    const series: uPlot.Series[] = [{ label: 'common t [s]' }];
    options.curves.forEach((c) => {
      series.push({ label: c.label, stroke: () => theme().runs[c.run % theme().runs.length], width: 1.5, points: { show: false }, spanGaps: true });
    });
    const unit = options.unit && options.unit !== '1' ? `[${options.unit}]` : options.label;
    this.plot = new uPlot(
      {
        width: this.width,
        height: HEIGHT_PX,
        series,
        scales: { x: { time: false, range: safeRange(false) }, y: { auto: true, range: safeRange(false) } },
        axes: [axis(theme, 'common time [s]'), axis(theme, unit)],
        legend: { show: true, live: true },
        cursor: {
          sync: { key: options.syncKey, setSeries: false },
          drag: { x: true, y: false, setScale: true },
          bind: {
            dblclick: (u) => () => {
              u.setScale('x', { min: x[0] ?? 0, max: x[x.length - 1] ?? 1 });
              return null;
            },
          },
        },
      },
      [[...x], ...ys.map((c) => [...c])] as uPlot.AlignedData,
      this.container,
    );
    this.points = ys.reduce((n, c) => n + c.filter((v) => v !== null).length, 0);
    return this.points;
  }
}
