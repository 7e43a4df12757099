//! The house colour maps and series palette.
//!
//! - Fields (sequential): the "cubehelix" scheme of Green (2011, Bull. Astr. Soc. India 39, 289, eq. 2), a helix
//!   around the grey diagonal of the RGB cube, walked so that CIELAB lightness rises linearly with the value:
//!   the order of values reads the same in colour, in grey print and for colour-blind readers. Our parameters
//!   (a half turn from plum through blue and teal to mint, L* 14–95) are our own.
//! - Signed quantities (diverging): Moreland's (2009, "Diverging color maps for scientific visualization",
//!   ISVC, §4–5) cool–warm map, interpolated in his Msh space (polar CIELAB) between his two published end
//!   colours through a neutral white, so both halves have the same lightness ramp.
//! - Series: six colours of our own choosing, different in hue and lightness.

use plotters::style::RGBColor;

/// CIELAB lightness L* at the two ends of the field map (our choice: dark enough for contrast with white
/// paper, light enough to stay distinct from it).
const FIELD_LIGHTNESS: (f64, f64) = (14.0, 95.0);
/// Helix start colour, rotations and hue (saturation amplitude) of Green (2011, §2): our own choice.
const HELIX_START: f64 = 0.6;
const HELIX_ROTATIONS: f64 = -0.55;
const HELIX_HUE: f64 = 1.25;
/// Entries of the precomputed field map.
const FIELD_ENTRIES: usize = 256;

/// The helix colour (sRGB, 0..1, unclamped) at hue position `t` and grey level `lambda` (Green 2011, eq. 2).
fn helix(t: f64, lambda: f64) -> [f64; 3] {
    let phi = std::f64::consts::TAU * (HELIX_START / 3.0 + HELIX_ROTATIONS * t);
    let a = HELIX_HUE * lambda * (1.0 - lambda) / 2.0;
    let (c, s) = (phi.cos(), phi.sin());
    [
        lambda + a * (-0.14861 * c + 1.78277 * s),
        lambda + a * (-0.29227 * c - 0.90649 * s),
        lambda + a * (1.97294 * c),
    ]
}

/// The field map as a table: at each position the helix grey level is chosen (by bisection) so that CIELAB
/// lightness rises linearly from one end to the other, which makes equal steps in value equal steps in
/// perceived lightness (Green's own gamma only makes his luminance linear, not L*).
fn field_table() -> &'static [[u8; 3]; FIELD_ENTRIES] {
    static TABLE: std::sync::OnceLock<[[u8; 3]; FIELD_ENTRIES]> = std::sync::OnceLock::new();
    TABLE.get_or_init(|| {
        let mut table = [[0u8; 3]; FIELD_ENTRIES];
        for (k, entry) in table.iter_mut().enumerate() {
            let t = k as f64 / (FIELD_ENTRIES - 1) as f64;
            let target = FIELD_LIGHTNESS.0 + t * (FIELD_LIGHTNESS.1 - FIELD_LIGHTNESS.0);
            let lightness = |lambda: f64| {
                let [r, g, b] = helix(t, lambda).map(|c| c.clamp(0.0, 1.0));
                lab_linear([linear(r), linear(g), linear(b)])[0]
            };
            let (mut lo, mut hi) = (0.0, 1.0);
            for _ in 0..50 {
                let mid = 0.5 * (lo + hi);
                if lightness(mid) < target {
                    lo = mid;
                } else {
                    hi = mid;
                }
            }
            *entry = helix(t, 0.5 * (lo + hi)).map(byte);
        }
        table
    })
}

/// Sequential field colour of `t` in [0, 1] (clamped): dark at 0, light at 1.
pub fn field(t: f64) -> RGBColor {
    let t = if t.is_finite() { t.clamp(0.0, 1.0) } else { 0.0 };
    let [r, g, b] = field_table()[(t * (FIELD_ENTRIES - 1) as f64).round() as usize];
    RGBColor(r, g, b)
}

/// Diverging colour of `t` in [0, 1] (clamped): blue at 0, white at 0.5, red at 1.
pub fn signed(t: f64) -> RGBColor {
    let t = if t.is_finite() { t.clamp(0.0, 1.0) } else { 0.5 };
    // Moreland (2009) Table/Fig. 6 end points, sRGB.
    let cool = msh(lab_of([59, 76, 192]));
    let warm = msh(lab_of([180, 4, 38]));
    let [l, a, b] = lab_of_msh(interpolate(cool, warm, t));
    let [r, g, b] = srgb_of(l, a, b);
    RGBColor(byte(r), byte(g), byte(b))
}

/// Series colours, in order of use.
pub const SERIES: [RGBColor; 6] = [
    RGBColor(31, 92, 153),  // deep slate blue
    RGBColor(209, 112, 29), // copper
    RGBColor(30, 145, 120), // sea green
    RGBColor(150, 45, 110), // plum
    RGBColor(140, 130, 20), // olive
    RGBColor(90, 94, 107),  // slate grey
];

/// Series colour number `i` (cycling).
pub fn series(i: usize) -> RGBColor {
    SERIES[i % SERIES.len()]
}

fn byte(v: f64) -> u8 {
    (v.clamp(0.0, 1.0) * 255.0).round() as u8
}

/// D65 reference white (CIE 15:2004), as Moreland uses.
const WHITE: [f64; 3] = [0.950_47, 1.0, 1.088_83];

fn linear(c: f64) -> f64 {
    if c <= 0.040_45 {
        c / 12.92
    } else {
        ((c + 0.055) / 1.055).powf(2.4)
    }
}

fn gamma(c: f64) -> f64 {
    if c <= 0.003_130_8 {
        12.92 * c
    } else {
        1.055 * c.powf(1.0 / 2.4) - 0.055
    }
}

/// CIELAB (D65) of an sRGB colour (IEC 61966-2-1 transfer and matrix; CIE 15:2004 Lab).
pub fn lab_of(rgb: [u8; 3]) -> [f64; 3] {
    lab_linear(rgb.map(|c| linear(c as f64 / 255.0)))
}

/// CIELAB of linear-light sRGB components.
fn lab_linear([r, g, b]: [f64; 3]) -> [f64; 3] {
    let x = 0.412_456_4 * r + 0.357_576_1 * g + 0.180_437_5 * b;
    let y = 0.212_672_9 * r + 0.715_152_2 * g + 0.072_175_0 * b;
    let z = 0.019_333_9 * r + 0.119_192_0 * g + 0.950_304_1 * b;
    let f = |t: f64| if t > 216.0 / 24389.0 { t.cbrt() } else { (24389.0 / 27.0 * t + 16.0) / 116.0 };
    let (fx, fy, fz) = (f(x / WHITE[0]), f(y / WHITE[1]), f(z / WHITE[2]));
    [116.0 * fy - 16.0, 500.0 * (fx - fy), 200.0 * (fy - fz)]
}

/// sRGB in [0, 1] (unclamped) of a CIELAB colour.
fn srgb_of(l: f64, a: f64, b: f64) -> [f64; 3] {
    let fy = (l + 16.0) / 116.0;
    let (fx, fz) = (fy + a / 500.0, fy - b / 200.0);
    let inv =
        |f: f64| if f.powi(3) > 216.0 / 24389.0 { f.powi(3) } else { (116.0 * f - 16.0) * 27.0 / 24389.0 };
    let (x, y, z) = (inv(fx) * WHITE[0], inv(fy) * WHITE[1], inv(fz) * WHITE[2]);
    let r = 3.240_454_2 * x - 1.537_138_5 * y - 0.498_531_4 * z;
    let g = -0.969_266_0 * x + 1.876_010_8 * y + 0.041_556_0 * z;
    let bb = 0.055_643_4 * x - 0.204_025_9 * y + 1.057_225_2 * z;
    [gamma(r), gamma(g), gamma(bb)]
}

/// Msh (Moreland 2009, eq. 1): magnitude, saturation angle, hue angle of a Lab colour.
fn msh([l, a, b]: [f64; 3]) -> [f64; 3] {
    let m = (l * l + a * a + b * b).sqrt();
    [m, (l / m).acos(), b.atan2(a)]
}

fn lab_of_msh([m, s, h]: [f64; 3]) -> [f64; 3] {
    [m * s.cos(), m * s.sin() * h.cos(), m * s.sin() * h.sin()]
}

/// Moreland (2009) §5: the hue of the unsaturated end spun so the path does not show a hue jump.
fn adjust_hue([m, s, h]: [f64; 3], m_unsaturated: f64) -> f64 {
    if m >= m_unsaturated {
        return h;
    }
    let spin = s * (m_unsaturated * m_unsaturated - m * m).sqrt() / (m * s.sin());
    if h > -std::f64::consts::FRAC_PI_3 {
        h + spin
    } else {
        h - spin
    }
}

/// Moreland (2009) §5 interpolation in Msh, through white (M = max(M1, M2, 88)) when the ends differ in hue.
fn interpolate(mut c1: [f64; 3], mut c2: [f64; 3], mut t: f64) -> [f64; 3] {
    if c1[1] > 0.05 && c2[1] > 0.05 && angle_between(c1[2], c2[2]) > std::f64::consts::FRAC_PI_3 {
        let middle = c1[0].max(c2[0]).max(88.0);
        if t < 0.5 {
            c2 = [middle, 0.0, 0.0];
            t *= 2.0;
        } else {
            c1 = [middle, 0.0, 0.0];
            t = 2.0 * t - 1.0;
        }
    }
    if c1[1] < 0.05 && c2[1] > 0.05 {
        c1[2] = adjust_hue(c2, c1[0]);
    } else if c2[1] < 0.05 && c1[1] > 0.05 {
        c2[2] = adjust_hue(c1, c2[0]);
    }
    [0, 1, 2].map(|k| (1.0 - t) * c1[k] + t * c2[k])
}

fn angle_between(h1: f64, h2: f64) -> f64 {
    let d = (h1 - h2).abs() % std::f64::consts::TAU;
    d.min(std::f64::consts::TAU - d)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lightness(c: RGBColor) -> f64 {
        lab_of([c.0, c.1, c.2])[0]
    }

    #[test]
    fn field_map_lightness_rises_steadily() {
        let l: Vec<f64> = (0..=32).map(|k| lightness(field(k as f64 / 32.0))).collect();
        let steps: Vec<f64> = l.windows(2).map(|w| w[1] - w[0]).collect();
        // Perceptual uniformity in lightness: equal steps of L* (8-bit rounding aside).
        let expected = (95.0 - 14.0) / 32.0;
        assert!(steps.iter().all(|&d| (d - expected).abs() < 0.4), "{steps:?}");
        assert!((l[0] - 14.0).abs() < 0.5 && (l[32] - 95.0).abs() < 0.5, "{} {}", l[0], l[32]);
    }

    #[test]
    fn signed_map_is_symmetric_in_lightness_and_white_in_the_middle() {
        let mid = signed(0.5);
        assert!(mid.0 > 215 && mid.1 > 215 && mid.2 > 215, "{mid:?}");
        for k in 0..=10 {
            let t = k as f64 / 20.0;
            let (a, b) = (lightness(signed(t)), lightness(signed(1.0 - t)));
            assert!((a - b).abs() < 3.0, "t = {t}: {a} vs {b}");
        }
        // Ends close to Moreland's published end colours.
        let (blue, red) = (signed(0.0), signed(1.0));
        assert!((blue.0 as i32 - 59).abs() <= 2 && (blue.2 as i32 - 192).abs() <= 2, "{blue:?}");
        assert!((red.0 as i32 - 180).abs() <= 2 && (red.1 as i32 - 4).abs() <= 3, "{red:?}");
    }

    #[test]
    fn lab_of_white_and_black() {
        let w = lab_of([255, 255, 255]);
        assert!((w[0] - 100.0).abs() < 1e-3 && w[1].abs() < 1e-2 && w[2].abs() < 1e-2, "{w:?}");
        assert!(lab_of([0, 0, 0])[0].abs() < 1e-9);
        let back = srgb_of(w[0], w[1], w[2]);
        assert!(back.iter().all(|c| (c - 1.0).abs() < 1e-4), "{back:?}");
    }
}
