import { onBeforeUnmount, onMounted, shallowRef, watch, type Ref } from 'vue';
import uPlot from 'uplot';
import 'uplot/dist/uPlot.min.css';

/** Reads a Driftbench CSS variable (palette lives in src/styles/variables.css). */
export function cssVar(name: string, fallback = '#1f3a4d'): string {
  if (typeof document === 'undefined') return fallback;
  const v = getComputedStyle(document.documentElement).getPropertyValue(name).trim();
  return v || fallback;
}

/** Series colours 1–6 of the current theme. */
export function seriesColour(i: number): string {
  const fallbacks = ['#1f6f8b', '#c26a1b', '#6a8d2f', '#8a4f9e', '#b3405b', '#4b5b66'];
  return cssVar(`--db-series-${(i % 6) + 1}`, fallbacks[i % 6]);
}

/** Below this width (px) a chart is compact: one value axis, smaller axis gutters, a lower plot. */
export const COMPACT_CHART_WIDTH = 520;

/** Whether a chart of this width is drawn compact (phones, narrow columns). */
export function isCompactChart(width: number): boolean {
  return width < COMPACT_CHART_WIDTH;
}

/**
 * One uPlot chart bound to an element: created on mount with the options `build` returns for the
 * element's width, fed through `setData`, resized with the element, destroyed on unmount. When a
 * resize crosses the compact width the chart is rebuilt, so `build` can drop an axis on phones.
 * Streaming callers keep their buffers in typed arrays and call `setData` themselves.
 */
export function useUplot(
  el: Ref<HTMLElement | null>,
  build: (width: number) => uPlot.Options,
  initial: uPlot.AlignedData,
) {
  const chart = shallowRef<uPlot | null>(null);
  let observer: ResizeObserver | null = null;
  let data = initial;
  let compact = false;

  function create() {
    if (!el.value) return;
    chart.value?.destroy();
    const width = Math.max(200, el.value.clientWidth);
    compact = isCompactChart(width);
    chart.value = new uPlot(build(width), data, el.value);
  }

  onMounted(() => {
    create();
    if (el.value && typeof ResizeObserver !== 'undefined') {
      observer = new ResizeObserver(() => {
        const c = chart.value;
        if (!c || !el.value) return;
        const width = Math.max(200, el.value.clientWidth);
        if (isCompactChart(width) !== compact) create();
        else c.setSize({ width, height: c.height });
      });
      observer.observe(el.value);
    }
  });
  onBeforeUnmount(() => {
    observer?.disconnect();
    chart.value?.destroy();
    chart.value = null;
  });

  return {
    chart,
    /** Replaces the data; `resetScales` false keeps the user's zoom. */
    setData(next: uPlot.AlignedData, resetScales = true) {
      data = next;
      chart.value?.setData(next, resetScales);
    },
    /** Rebuilds the chart (e.g. when the theme or the series change). */
    rebuild: create,
    watchRebuild(source: Ref<unknown>) {
      watch(source, create);
    },
  };
}
