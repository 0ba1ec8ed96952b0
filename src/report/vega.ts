/**
 * Vega specs rendered on the server side (renderer 'none' + toSVG: no canvas, no browser). The
 * SVG is made by this program from numbers only, so it may be inlined. The same view's
 * scenegraph is kept for the PDF, which draws it directly (src/report/pdfdraw.ts) instead of
 * parsing the SVG back.
 */
import * as vega from 'vega';

/** A rendered chart: its SVG (HTML) and its scenegraph (PDF). */
export interface RenderedChart {
  svg: string;
  /** the scenegraph root (a group mark) as vega laid it out */
  scene: unknown;
  /** chart size and the padding offset of the root group, in chart units (px = pt) */
  width: number; height: number; origin: [number, number];
  background: string | null;
}

export async function renderChart(spec: vega.Spec, idPrefix = 'fig'): Promise<RenderedChart> {
  const view = new vega.View(vega.parse(spec), { renderer: 'none', logLevel: vega.Error });
  try {
    const svg = renumberClips(await view.toSVG(), idPrefix);
    const pad = view.padding() as { left?: number; top?: number };
    const bg = view.background() as unknown;
    return { svg, scene: (view.scenegraph() as unknown as { root: unknown }).root, width: view.width() + (pad.left ?? 0) + ((view.padding() as { right?: number }).right ?? 0),
      height: view.height() + (pad.top ?? 0) + ((view.padding() as { bottom?: number }).bottom ?? 0), origin: [pad.left ?? 0, pad.top ?? 0],
      background: typeof bg === 'string' ? bg : null };
  } finally {
    view.finalize();
  }
}

export async function renderSvg(spec: vega.Spec, idPrefix = 'fig'): Promise<string> {
  return (await renderChart(spec, idPrefix)).svg;
}

/**
 * vega numbers clip paths and gradients with a process-wide counter, so the same chart rendered twice gets
 * different ids. Renumber them per chart under a prefix: deterministic and unique in a page.
 */
export function renumberClips(svg: string, prefix: string): string {
  const map = new Map<string, string>();
  return svg.replace(/\b(clip|gradient_|pattern_)(\d+)\b/g, (m: string, kind: string) => {
    if (!map.has(m)) map.set(m, `${prefix}-${kind.replace('_', '')}${map.size + 1}`);
    return map.get(m)!;
  });
}
