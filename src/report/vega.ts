/**
 * Vega specs rendered to SVG on the server side (renderer 'none' + toSVG: no canvas, no
 * browser). The SVG is made by this program from numbers only, so it may be inlined.
 */
import * as vega from 'vega';

export async function renderSvg(spec: vega.Spec): Promise<string> {
  const view = new vega.View(vega.parse(spec), { renderer: 'none', logLevel: vega.Error });
  try {
    const svg = await view.toSVG();
    return svg;
  } finally {
    view.finalize();
  }
}
