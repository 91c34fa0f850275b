import { parse, View } from "vega";
import { compile, type TopLevelSpec } from "vega-lite";

/**
 * Draws a Vega-Lite chart to an SVG document in Node, with no browser and no canvas: Vega's
 * scenegraph rendered by its SVG string renderer. Text widths are estimated (no font
 * metrics), which only affects label placement slightly.
 */
export async function renderSvg(spec: TopLevelSpec): Promise<string> {
  const view = new View(parse(compile(spec).spec), { renderer: "none" });
  try {
    const svg = await view.toSVG();
    // One picture to assistive technology, not a tree of shapes.
    return svg.replace(/^<svg /, '<svg role="img" ');
  } finally {
    view.finalize();
  }
}
