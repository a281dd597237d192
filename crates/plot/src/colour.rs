//! The colour map of the field pictures.
//!
//! Ten anchor colours of "viridis", the perceptually uniform map designed by N. Smith and
//! S. van der Walt for matplotlib 2.0 (2015, released CC0), at equal steps from 0 to 1; between
//! anchors the sRGB components are interpolated linearly. The anchors are the ten-step viridis
//! hex values as commonly quoted, written down from memory (not copied from a file), so the map
//! is close to viridis, not bit-identical to it. Dark violet is the bottom of the range, yellow
//! the top; lightness rises monotonically, so the picture reads in grey print too.

use plotters::style::RGBColor;

/// Anchor colours, bottom (0) to top (1) of the range.
const ANCHORS: [(u8, u8, u8); 10] = [
    (0x44, 0x01, 0x54),
    (0x48, 0x28, 0x78),
    (0x3e, 0x49, 0x89),
    (0x31, 0x68, 0x8e),
    (0x26, 0x82, 0x8e),
    (0x1f, 0x9e, 0x89),
    (0x35, 0xb7, 0x79),
    (0x6e, 0xce, 0x58),
    (0xb5, 0xde, 0x2b),
    (0xfd, 0xe7, 0x25),
];

/// Colour of the fraction `s` of the range (clamped to [0, 1]; NaN gives the bottom colour).
pub fn colour(s: f64) -> RGBColor {
    let s = if s.is_nan() { 0.0 } else { s.clamp(0.0, 1.0) };
    let scaled = s * (ANCHORS.len() - 1) as f64;
    let i = (scaled.floor() as usize).min(ANCHORS.len() - 2);
    let f = scaled - i as f64;
    let (a, b) = (ANCHORS[i], ANCHORS[i + 1]);
    let mix = |p: u8, q: u8| (f64::from(p) + f * (f64::from(q) - f64::from(p))).round() as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// The colour at the bottom of the range.
pub const BOTTOM: RGBColor = RGBColor(ANCHORS[0].0, ANCHORS[0].1, ANCHORS[0].2);
/// The colour at the top of the range.
pub const TOP: RGBColor = RGBColor(ANCHORS[9].0, ANCHORS[9].1, ANCHORS[9].2);

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ends_and_anchors_are_exact_and_lightness_rises() {
        assert_eq!(colour(0.0), BOTTOM);
        assert_eq!(colour(1.0), TOP);
        assert_eq!(colour(-3.0), BOTTOM);
        assert_eq!(colour(7.0), TOP);
        assert_eq!(colour(5.0 / 9.0), RGBColor(0x1f, 0x9e, 0x89));
        // Relative luminance (ITU-R BT.709 weights on the sRGB values, a rough lightness
        // measure; common practice, no source) rises along the map.
        let lum = |c: RGBColor| 0.2126 * c.0 as f64 + 0.7152 * c.1 as f64 + 0.0722 * c.2 as f64;
        let mut last = -1.0;
        for k in 0..=100 {
            let l = lum(colour(k as f64 / 100.0));
            assert!(l > last, "lightness falls at {k} %");
            last = l;
        }
    }
}
