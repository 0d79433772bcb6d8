// Colours of the charts: a categorical set for groups (folds, test data, phases) and the theme variables the
// charts read. Chosen for this project: distinct in lightness as well as hue, so they survive grey-scale
// printing and the common red–green colour-vision deficiencies better than a rainbow.

/** Categorical colours for groups, in order of first appearance. */
export const groupColours: readonly string[] = [
  '#1f6f8b', // deep lagoon
  '#e0892b', // amber
  '#7b4fa0', // plum
  '#5c9e3c', // moss
  '#c2413a', // brick
  '#3fb4c4', // glacier
  '#8c6d46', // walnut
  '#d35fa0', // orchid
];

/**
 * Colour of the n-th group (cycles when there are more groups than colours), as a CSS value: the theme may
 * override each through `--pw-group-0` … `--pw-group-7` (a dark theme wants lighter tones).
 */
export function groupColour(index: number): string {
  const n = groupColours.length;
  const k = ((index % n) + n) % n;
  return `var(--pw-group-${k}, ${groupColours[k]})`;
}

/** Theme colours as CSS custom properties with light-theme fallbacks; the app's themes set the variables. */
export const themeVar = {
  fg: 'var(--pw-fg, #1c2430)',
  muted: 'var(--pw-muted, #5d6878)',
  grid: 'var(--pw-grid, #dfe3ea)',
  bg: 'var(--pw-bg, #ffffff)',
  panel: 'var(--pw-panel, #f5f7fa)',
  accent: 'var(--pw-accent, #1f6f8b)',
  warn: 'var(--pw-warn, #c0306a)',
} as const;
