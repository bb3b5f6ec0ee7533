//! A small raster canvas for the contour pictures: filled rectangles, lines of any width
//! and dashes, discs and rings with smoothed edges (coverage from the distance to the
//! shape, common practice), text from the bundled font, and PNG encoding.
//!
//! The font is Liberation Sans Regular, bundled in `service/assets/fonts/` with its
//! licence (SIL Open Font License 1.1), so pictures look the same on every machine and
//! need no fonts installed.

use ab_glyph::{Font, FontRef, PxScale, ScaleFont};

/// The bundled font file.
const FONT_BYTES: &[u8] = include_bytes!("../../../assets/fonts/LiberationSans-Regular.ttf");

/// An RGB colour.
pub type Rgb = [u8; 3];

/// White.
pub const WHITE: Rgb = [255, 255, 255];
/// Black.
pub const BLACK: Rgb = [0, 0, 0];

/// A picture being drawn: RGB pixels, row by row from the top.
#[derive(Debug, Clone)]
pub struct Canvas {
    /// Width in pixels.
    pub width: u32,
    /// Height in pixels.
    pub height: u32,
    /// The pixels.
    pub pixels: Vec<Rgb>,
}

/// Text measured and rasterised: coverage from 0 to 1 per pixel.
struct TextMask {
    width: usize,
    height: usize,
    coverage: Vec<f32>,
}

/// How text stands against the point it is placed at.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Anchor {
    /// The point is the text's left end, at its middle height.
    Left,
    /// The point is the text's middle.
    Centre,
    /// The point is the text's right end, at its middle height.
    Right,
}

fn font() -> FontRef<'static> {
    FontRef::try_from_slice(FONT_BYTES).expect("the bundled font parses")
}

/// The width in pixels of `text` at `size` pixels.
pub fn text_width(text: &str, size: f32) -> f32 {
    let font = font();
    let scaled = font.as_scaled(PxScale::from(size));
    let mut width = 0.0;
    let mut previous = None;
    for c in text.chars() {
        let id = scaled.glyph_id(c);
        if let Some(before) = previous {
            width += scaled.kern(before, id);
        }
        width += scaled.h_advance(id);
        previous = Some(id);
    }
    width
}

fn text_mask(text: &str, size: f32) -> TextMask {
    let font = font();
    let scaled = font.as_scaled(PxScale::from(size));
    let ascent = scaled.ascent();
    let height = (scaled.ascent() - scaled.descent()).ceil() as usize + 2;
    let width = text_width(text, size).ceil() as usize + 2;
    let mut coverage = vec![0.0f32; width * height];
    let mut x = 1.0;
    let mut previous = None;
    for c in text.chars() {
        let id = scaled.glyph_id(c);
        if let Some(before) = previous {
            x += scaled.kern(before, id);
        }
        let glyph = id.with_scale_and_position(PxScale::from(size), ab_glyph::point(x, 1.0 + ascent));
        if let Some(outlined) = font.outline_glyph(glyph) {
            let bounds = outlined.px_bounds();
            outlined.draw(|gx, gy, value| {
                let px = bounds.min.x as i64 + i64::from(gx);
                let py = bounds.min.y as i64 + i64::from(gy);
                if px >= 0 && py >= 0 && (px as usize) < width && (py as usize) < height {
                    let cell = &mut coverage[py as usize * width + px as usize];
                    *cell = (*cell + value).min(1.0);
                }
            });
        }
        x += scaled.h_advance(id);
        previous = Some(id);
    }
    TextMask {
        width,
        height,
        coverage,
    }
}

impl Canvas {
    /// A canvas of one colour.
    pub fn new(width: u32, height: u32, background: Rgb) -> Self {
        Self {
            width,
            height,
            pixels: vec![background; width as usize * height as usize],
        }
    }

    /// Mixes `colour` into the pixel at (x, y) by `alpha` (0 to 1); outside, nothing.
    pub fn blend(&mut self, x: i64, y: i64, colour: Rgb, alpha: f32) {
        if x < 0 || y < 0 || x >= i64::from(self.width) || y >= i64::from(self.height) || alpha <= 0.0 {
            return;
        }
        let pixel = &mut self.pixels[y as usize * self.width as usize + x as usize];
        let alpha = alpha.min(1.0);
        for channel in 0..3 {
            let mixed = f32::from(pixel[channel]) * (1.0 - alpha) + f32::from(colour[channel]) * alpha;
            pixel[channel] = mixed.round().clamp(0.0, 255.0) as u8;
        }
    }

    /// The colour at (x, y).
    pub fn pixel(&self, x: u32, y: u32) -> Rgb {
        self.pixels[y as usize * self.width as usize + x as usize]
    }

    /// Fills the pixels whose centres lie in `[x0, x1) × [y0, y1)`.
    pub fn fill_rect(&mut self, x0: f64, y0: f64, x1: f64, y1: f64, colour: Rgb) {
        let (left, right) = (x0.round().max(0.0) as i64, x1.round().min(f64::from(self.width)) as i64);
        let (top, bottom) = (
            y0.round().max(0.0) as i64,
            y1.round().min(f64::from(self.height)) as i64,
        );
        for y in top..bottom {
            for x in left..right {
                self.pixels[y as usize * self.width as usize + x as usize] = colour;
            }
        }
    }

    /// A straight line `width` pixels wide with smoothed edges and round ends.
    pub fn line(&mut self, from: (f64, f64), to: (f64, f64), width: f64, colour: Rgb) {
        let half = width / 2.0;
        let reach = half + 1.0;
        let (left, right) = (from.0.min(to.0) - reach, from.0.max(to.0) + reach);
        let (top, bottom) = (from.1.min(to.1) - reach, from.1.max(to.1) + reach);
        let (dx, dy) = (to.0 - from.0, to.1 - from.1);
        let length_sq = dx * dx + dy * dy;
        for y in top.floor() as i64..=bottom.ceil() as i64 {
            for x in left.floor() as i64..=right.ceil() as i64 {
                let (px, py) = (x as f64 + 0.5, y as f64 + 0.5);
                let t = if length_sq > 0.0 {
                    (((px - from.0) * dx + (py - from.1) * dy) / length_sq).clamp(0.0, 1.0)
                } else {
                    0.0
                };
                let distance = (px - from.0 - t * dx).hypot(py - from.1 - t * dy);
                let coverage = (half + 0.5 - distance).clamp(0.0, 1.0);
                if coverage > 0.0 {
                    self.blend(x, y, colour, coverage as f32);
                }
            }
        }
    }

    /// A dashed line: `dash` pixels drawn, `gap` pixels left, from `from`.
    pub fn dashed_line(&mut self, from: (f64, f64), to: (f64, f64), width: f64, colour: Rgb, dash: f64, gap: f64) {
        let length = (to.0 - from.0).hypot(to.1 - from.1);
        if length <= 0.0 {
            return;
        }
        let mut at = 0.0;
        while at < length {
            let end = (at + dash).min(length);
            let point = |s: f64| {
                (
                    from.0 + (to.0 - from.0) * s / length,
                    from.1 + (to.1 - from.1) * s / length,
                )
            };
            self.line(point(at), point(end), width, colour);
            at = end + gap;
        }
    }

    /// A filled disc with a smoothed edge.
    pub fn disc(&mut self, centre: (f64, f64), radius: f64, colour: Rgb) {
        self.ring_or_disc(centre, radius, None, colour);
    }

    /// A circle's outline `width` pixels wide, centred on `radius`.
    pub fn ring(&mut self, centre: (f64, f64), radius: f64, width: f64, colour: Rgb) {
        self.ring_or_disc(centre, radius, Some(width), colour);
    }

    fn ring_or_disc(&mut self, centre: (f64, f64), radius: f64, width: Option<f64>, colour: Rgb) {
        let reach = radius + width.unwrap_or(0.0) + 1.0;
        for y in (centre.1 - reach).floor() as i64..=(centre.1 + reach).ceil() as i64 {
            for x in (centre.0 - reach).floor() as i64..=(centre.0 + reach).ceil() as i64 {
                let distance = (x as f64 + 0.5 - centre.0).hypot(y as f64 + 0.5 - centre.1);
                let coverage = match width {
                    None => radius + 0.5 - distance,
                    Some(width) => width / 2.0 + 0.5 - (distance - radius).abs(),
                };
                if coverage > 0.0 {
                    self.blend(x, y, colour, coverage.min(1.0) as f32);
                }
            }
        }
    }

    /// Writes `text` at `size` pixels, placed by `anchor` at (x, y); returns the box it
    /// covers (left, top, right, bottom). `upright` turns it a quarter to read upwards
    /// (for a vertical axis title), the anchor then running along the vertical.
    pub fn text(
        &mut self,
        text: &str,
        at: (f64, f64),
        size: f32,
        anchor: Anchor,
        colour: Rgb,
        upright: bool,
    ) -> (f64, f64, f64, f64) {
        let mask = text_mask(text, size);
        let (w, h) = (mask.width as f64, mask.height as f64);
        let along = match anchor {
            Anchor::Left => 0.0,
            Anchor::Centre => w / 2.0,
            Anchor::Right => w,
        };
        if !upright {
            let (left, top) = ((at.0 - along).round(), (at.1 - h / 2.0).round());
            for y in 0..mask.height {
                for x in 0..mask.width {
                    let value = mask.coverage[y * mask.width + x];
                    if value > 0.0 {
                        self.blend(left as i64 + x as i64, top as i64 + y as i64, colour, value);
                    }
                }
            }
            (left, top, left + w, top + h)
        } else {
            // Turned a quarter anticlockwise: the text's x runs up the picture.
            let (left, bottom) = ((at.0 - h / 2.0).round(), (at.1 + along).round());
            for y in 0..mask.height {
                for x in 0..mask.width {
                    let value = mask.coverage[y * mask.width + x];
                    if value > 0.0 {
                        self.blend(left as i64 + y as i64, bottom as i64 - x as i64, colour, value);
                    }
                }
            }
            (left, bottom - w, left + h, bottom)
        }
    }

    /// The picture as a PNG file (8-bit RGB, fast compression).
    pub fn to_png(&self) -> Vec<u8> {
        let mut out = Vec::new();
        let mut encoder = png::Encoder::new(&mut out, self.width, self.height);
        encoder.set_color(png::ColorType::Rgb);
        encoder.set_depth(png::BitDepth::Eight);
        encoder.set_compression(png::Compression::Fast);
        let data: Vec<u8> = self.pixels.iter().flatten().copied().collect();
        // Writing to memory cannot fail for a size that matches the data.
        if let Ok(mut writer) = encoder.write_header() {
            let _ = writer.write_image_data(&data);
        }
        out
    }
}

/// The colour scale of the filled bands, from the lowest predicted response (dark slate
/// blue) through teal and sage to pale straw (highest): our own choice, with a lightness
/// that rises steadily so that the bands stay in order when printed in grey.
const SCALE: [Rgb; 5] = [
    [0x26, 0x2A, 0x5C],
    [0x2C, 0x63, 0x86],
    [0x4B, 0x95, 0x86],
    [0xA6, 0xC2, 0x84],
    [0xF4, 0xEE, 0xC4],
];

/// The colour at `t` from 0 (lowest) to 1 (highest) on the scale.
pub fn scale_colour(t: f64) -> Rgb {
    let t = if t.is_finite() { t.clamp(0.0, 1.0) } else { 0.0 };
    let position = t * (SCALE.len() - 1) as f64;
    let index = (position.floor() as usize).min(SCALE.len() - 2);
    let within = position - index as f64;
    let (a, b) = (SCALE[index], SCALE[index + 1]);
    let mut colour = [0u8; 3];
    for channel in 0..3 {
        colour[channel] =
            (f64::from(a[channel]) + (f64::from(b[channel]) - f64::from(a[channel])) * within).round() as u8;
    }
    colour
}

/// The grey a printer makes of `colour`: its luma (ITU-R BT.601 weights, common practice).
pub fn grey_of(colour: Rgb) -> f64 {
    0.299 * f64::from(colour[0]) + 0.587 * f64::from(colour[1]) + 0.114 * f64::from(colour[2])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_scale_grows_lighter_all_the_way() {
        let mut last = -1.0;
        for step in 0..=100 {
            let grey = grey_of(scale_colour(f64::from(step) / 100.0));
            assert!(grey > last, "step {step}: {grey} after {last}");
            last = grey;
        }
        // Ten bands stay at least 12 grey levels apart (of 255).
        for band in 0..9 {
            let (a, b) = (f64::from(band) / 9.0, f64::from(band + 1) / 9.0);
            assert!(grey_of(scale_colour(b)) - grey_of(scale_colour(a)) > 12.0);
        }
    }

    #[test]
    fn text_is_drawn_from_the_bundled_font() {
        let mut canvas = Canvas::new(200, 60, WHITE);
        let (left, _, right, _) = canvas.text("Temperature", (100.0, 30.0), 20.0, Anchor::Centre, BLACK, false);
        assert!(right - left > 80.0 && right - left < 140.0, "{left}..{right}");
        let dark = canvas.pixels.iter().filter(|pixel| pixel[0] < 128).count();
        assert!(dark > 100, "{dark} dark pixels");
    }
}
