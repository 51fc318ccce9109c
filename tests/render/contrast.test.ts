import { describe, it, expect } from 'vitest';
import { contrastRatio, relativeLuminance, parseColour, makeRamp } from '../../src/render/figures/colour.js';
import { TEXT_PAIRS } from '../../src/render/html/style.js';
import { THEME } from '../../src/render/figures/theme.js';

// Source: WCAG 2.x, "contrast ratio" and "relative luminance" definitions (W3C Recommendation):
// L = 0.2126 R + 0.7152 G + 0.0722 B on linearised sRGB channels; ratio (L1 + 0.05) / (L2 + 0.05).
// Success criterion 1.4.3 (AA): at least 4.5:1 for normal text, 3:1 for large text.
describe('WCAG 2.x contrast ratio', () => {
  it('gives the end points of the scale: black on white is 21:1, a colour on itself 1:1', () => {
    expect(contrastRatio('#000000', '#ffffff')).toBeCloseTo(21, 10);
    expect(contrastRatio('#ffffff', '#000000')).toBeCloseTo(21, 10);
    expect(contrastRatio('#777777', '#777777')).toBe(1);
    expect(relativeLuminance('#ffffff')).toBeCloseTo(1, 12);
    expect(relativeLuminance('#000000')).toBe(0);
  });

  it('weights the primaries by the standard coefficients', () => {
    expect(relativeLuminance('#ff0000')).toBeCloseTo(0.2126, 12);
    expect(relativeLuminance('#00ff00')).toBeCloseTo(0.7152, 12);
    expect(relativeLuminance('#0000ff')).toBeCloseTo(0.0722, 12);
  });

  it('linearises sRGB: mid grey #808080 has luminance ((128/255 + 0.055)/1.055)^2.4', () => {
    expect(relativeLuminance('#808080')).toBeCloseTo(((128 / 255 + 0.055) / 1.055) ** 2.4, 12);
    // below the linear-segment threshold the channel is divided by 12.92
    expect(relativeLuminance('#0a0a0a')).toBeCloseTo(10 / 255 / 12.92, 12);
  });

  it('puts the AA threshold for grey text on white between #777777 and #767676', () => {
    // consequence of the formula: #767676 is the lightest grey that passes 4.5:1 on white
    expect(contrastRatio('#767676', '#ffffff')).toBeGreaterThanOrEqual(4.5);
    expect(contrastRatio('#777777', '#ffffff')).toBeLessThan(4.5);
  });

  it('parses the colour notations the ramps return', () => {
    expect(parseColour('rgb(0, 32, 81)')).toEqual([0, 32, 81]);
    expect(parseColour('#abc')).toEqual([0xaa, 0xbb, 0xcc]);
    expect(makeRamp('viridis').hex(0)).toBe('#440154');
  });
});

describe('report text colours meet WCAG AA', () => {
  it.each(TEXT_PAIRS)('$what: $fg on $bg', ({ fg, bg, large }) => {
    expect(contrastRatio(fg, bg)).toBeGreaterThanOrEqual(large ? 3 : 4.5);
  });

  it('every text colour of the theme is among the checked pairs', () => {
    const fgs = new Set(TEXT_PAIRS.map((p) => p.fg));
    for (const c of [THEME.text, THEME.muted, THEME.link, THEME.tipText, THEME.cautionText, THEME.okText, THEME.failText]) expect(fgs.has(c)).toBe(true);
  });
});
