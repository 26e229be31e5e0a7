/**
 * A log whose column names, update ids and metadata carry markup and script payloads (issue 9).
 * If any of it reached the panel as HTML, the payloads would set `window.__pwned` (or be blocked by the CSP, which
 * logs a violation) and leave `<img src=x>` / `<script>` / `javascript:` elements in the document; the e2e test checks
 * for all three. The numbers are invented (a 1-dof channel with a few large innovations so the worst list is filled).
 */

/** Markup payloads placed in metadata, column names and ids. */
export const HOSTILE_PAYLOADS = {
  script: '<script>window.__pwned="script"</script>',
  img: '<img src=x onerror=window.__pwned="img">',
  link: '<a href="javascript:window.__pwned=\'link\'">click me</a>',
  svg: '<svg onload=window.__pwned="svg"></svg>',
} as const;

/** Channel name of the innovation columns: markup, with no CSV separator in it. */
export const HOSTILE_CHANNEL = "tdoa<img src=x onerror=window.__pwned='col'>";

/** Builds the hostile CSV text: `rows` epochs at 10 Hz, every 25th update an outlier. */
export function hostileCsv(rows = 400): string {
  const lines: string[] = [
    `# source: ${HOSTILE_PAYLOADS.script}`,
    `# title: ${HOSTILE_PAYLOADS.img}`,
    `# docs: ${HOSTILE_PAYLOADS.link}`,
    `# note: ${HOSTILE_PAYLOADS.svg} javascript:window.__pwned='meta'`,
    `t,p_x,p_y,p_z,nu_${HOSTILE_CHANNEL},s_${HOSTILE_CHANNEL},id_${HOSTILE_CHANNEL}`,
  ];
  const ids = [HOSTILE_PAYLOADS.img, HOSTILE_PAYLOADS.script, 'javascript:window.__pwned=1', HOSTILE_PAYLOADS.svg];
  for (let k = 0; k < rows; k++) {
    const t_s = (k * 0.1).toFixed(1);
    // Deterministic pseudo-noise in [-0.1, 0.1] m; every 25th update is a 2 m outlier (NIS 400 for S = 0.01 m^2).
    const nu_m = k % 25 === 12 ? 2 : 0.1 * Math.sin(k * 12.9898) * Math.cos(k * 78.233);
    const id = ids[k % ids.length]!.replace(/"/g, "'");
    lines.push(`${t_s},${(k * 0.05).toFixed(2)},0,1.5,${nu_m.toFixed(4)},0.01,${id}`);
  }
  return lines.join('\n') + '\n';
}
