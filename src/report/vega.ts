/**
 * Vega specs rendered to SVG on the server side (renderer 'none' + toSVG: no canvas, no
 * browser). The SVG is made by this program from numbers only, so it may be inlined.
 */
import * as vega from 'vega';

export async function renderSvg(spec: vega.Spec, idPrefix = 'fig'): Promise<string> {
  const view = new vega.View(vega.parse(spec), { renderer: 'none', logLevel: vega.Error });
  try {
    const svg = await view.toSVG();
    return renumberClips(svg, idPrefix);
  } finally {
    view.finalize();
  }
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
