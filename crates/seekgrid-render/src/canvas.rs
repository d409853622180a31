//! A small drawing surface over an RGBA image: embedded-graphics text and strokes, plus
//! alpha-blended polygon fills, which embedded-graphics does not provide.

use embedded_graphics::{
    Pixel,
    mono_font::{MonoFont, MonoTextStyle, iso_8859_1::FONT_10X20},
    pixelcolor::Rgb888,
    prelude::*,
    text::{Baseline, Text},
};
use image::{Rgba, RgbaImage};
use std::convert::Infallible;

/// Body font: 10 x 20 pixel glyphs with Latin-1 (so `²`, `°` and `·` print).
pub(crate) const BODY: &MonoFont<'static> = &FONT_10X20;

/// An RGBA colour.
pub(crate) type Rgba8 = [u8; 4];

pub(crate) struct Canvas {
    pub img: RgbaImage,
    /// Scale of all text (1 or 2), so decorations grow with very large maps.
    pub ui: i32,
}

impl OriginDimensions for Canvas {
    fn size(&self) -> Size {
        Size::new(self.img.width(), self.img.height())
    }
}

impl DrawTarget for Canvas {
    type Color = Rgb888;
    type Error = Infallible;

    fn draw_iter<I>(&mut self, pixels: I) -> Result<(), Self::Error>
    where
        I: IntoIterator<Item = Pixel<Self::Color>>,
    {
        let (w, h) = (self.img.width() as i32, self.img.height() as i32);
        for Pixel(p, c) in pixels {
            if p.x >= 0 && p.y >= 0 && p.x < w && p.y < h {
                self.img
                    .put_pixel(p.x as u32, p.y as u32, Rgba([c.r(), c.g(), c.b(), 255]));
            }
        }
        Ok(())
    }
}

/// Draws each pixel of the inner target as a `factor` x `factor` block (for the title font).
struct Scaled<'a> {
    inner: &'a mut Canvas,
    factor: i32,
}

impl OriginDimensions for Scaled<'_> {
    fn size(&self) -> Size {
        let s = self.inner.size();
        Size::new(s.width / self.factor as u32, s.height / self.factor as u32)
    }
}

impl DrawTarget for Scaled<'_> {
    type Color = Rgb888;
    type Error = Infallible;

    fn draw_iter<I>(&mut self, pixels: I) -> Result<(), Self::Error>
    where
        I: IntoIterator<Item = Pixel<Self::Color>>,
    {
        let f = self.factor;
        let blocks = pixels.into_iter().flat_map(move |Pixel(p, c)| {
            (0..f * f).map(move |k| Pixel(Point::new(p.x * f + k % f, p.y * f + k / f), c))
        });
        self.inner.draw_iter(blocks)
    }
}

pub(crate) fn rgb(c: Rgba8) -> Rgb888 {
    Rgb888::new(c[0], c[1], c[2])
}

impl Canvas {
    pub fn new(width: u32, height: u32, background: Rgba8, ui: i32) -> Self {
        Self {
            img: RgbaImage::from_pixel(width, height, Rgba(background)),
            ui: ui.max(1),
        }
    }

    /// Width in pixels of `s` in the body font at `scale` times the canvas text scale.
    pub fn text_width(&self, s: &str, scale: i32) -> i32 {
        text_width(s, BODY, scale * self.ui)
    }

    pub fn fill_rect(&mut self, x: i64, y: i64, w: i64, h: i64, c: Rgba8) {
        let (iw, ih) = (i64::from(self.img.width()), i64::from(self.img.height()));
        for yy in y.max(0)..(y + h).min(ih) {
            for xx in x.max(0)..(x + w).min(iw) {
                self.blend(xx as u32, yy as u32, c);
            }
        }
    }

    pub fn blend(&mut self, x: u32, y: u32, c: Rgba8) {
        if c[3] == 255 {
            self.img.put_pixel(x, y, Rgba(c));
            return;
        }
        let p = self.img.get_pixel_mut(x, y);
        let a = u32::from(c[3]);
        for (dst, src) in p.0.iter_mut().zip(c).take(3) {
            *dst = ((u32::from(src) * a + u32::from(*dst) * (255 - a) + 127) / 255) as u8;
        }
        p.0[3] = p.0[3].max(c[3]);
    }

    /// Body-font text with its top-left corner at (x, y), `scale` times the font's size times
    /// the canvas text scale.
    pub fn text(&mut self, s: &str, x: i32, y: i32, c: Rgba8, scale: i32) {
        let s = latin1(s);
        let scale = scale * self.ui;
        let style = MonoTextStyle::new(BODY, rgb(c));
        if scale <= 1 {
            let _ = Text::with_baseline(&s, Point::new(x, y), style, Baseline::Top).draw(self);
        } else {
            let mut t = Scaled {
                inner: self,
                factor: scale,
            };
            let _ = Text::with_baseline(&s, Point::new(x / scale, y / scale), style, Baseline::Top)
                .draw(&mut t);
        }
    }

    /// Text with a light halo so it reads over the coloured map.
    pub fn text_halo(&mut self, s: &str, x: i32, y: i32, c: Rgba8, halo: Rgba8) {
        for (dx, dy) in [
            (-1, 0),
            (1, 0),
            (0, -1),
            (0, 1),
            (-1, -1),
            (1, 1),
            (-1, 1),
            (1, -1),
        ] {
            self.text(s, x + dx * self.ui, y + dy * self.ui, halo, 1);
        }
        self.text(s, x, y, c, 1);
    }

    /// Strokes a path (pixel coordinates) `width` pixels wide with round joins, limited to the
    /// clip box. Drawn as one filled quad per segment plus a disc at each vertex, which gives
    /// even widths where embedded-graphics' thick polylines leave thin joins.
    pub fn stroke_path(
        &mut self,
        pts: &[(f64, f64)],
        width: f64,
        c: Rgba8,
        clip: (i64, i64, i64, i64),
    ) {
        let h = width.max(1.0) / 2.0;
        for w in pts.windows(2) {
            let ((ax, ay), (bx, by)) = (w[0], w[1]);
            let len = (bx - ax).hypot(by - ay);
            if len <= 0.0 || !len.is_finite() {
                continue;
            }
            let (nx, ny) = (-(by - ay) / len * h, (bx - ax) / len * h);
            let quad = vec![
                (ax + nx, ay + ny),
                (bx + nx, by + ny),
                (bx - nx, by - ny),
                (ax - nx, ay - ny),
                (ax + nx, ay + ny),
            ];
            let bb = bbox(&quad, clip);
            self.fill_rings(&[quad], c, bb);
        }
        if width >= 3.0 {
            for &(x, y) in pts {
                let disc: Vec<(f64, f64)> = (0..=16)
                    .map(|i| {
                        let a = f64::from(i) / 16.0 * std::f64::consts::TAU;
                        (x + h * a.cos(), y + h * a.sin())
                    })
                    .collect();
                let bb = bbox(&disc, clip);
                self.fill_rings(&[disc], c, bb);
            }
        }
    }

    /// Fills polygon rings (pixel coordinates, even-odd rule) with a blended colour, limited to
    /// the clip box `[x0, x1) x [y0, y1)`. A pixel is filled when its centre is inside.
    pub fn fill_rings(&mut self, rings: &[Vec<(f64, f64)>], c: Rgba8, clip: (i64, i64, i64, i64)) {
        let (x0, y0, x1, y1) = clip;
        // Edge table sorted by top: each scanline looks only at the edges spanning it, so big
        // polygons (coastlines) fill in time proportional to rows plus crossings.
        let mut edges: Vec<(f64, f64, f64, f64)> = rings
            .iter()
            .flat_map(|r| r.windows(2))
            .filter(|w| w[0].1 != w[1].1 && w[0].1.is_finite() && w[1].1.is_finite())
            .map(|w| {
                let (a, b) = if w[0].1 < w[1].1 {
                    (w[0], w[1])
                } else {
                    (w[1], w[0])
                };
                (a.1, b.1, a.0, (b.0 - a.0) / (b.1 - a.1))
            })
            .collect();
        if edges.is_empty() {
            return;
        }
        edges.sort_by(|p, q| p.0.total_cmp(&q.0));
        let top = edges[0].0;
        let bottom = edges.iter().map(|e| e.1).fold(f64::MIN, f64::max);
        let first_row = y0.max(0).max((top - 0.5).floor().max(-1e9) as i64);
        let last_row = y1
            .min(i64::from(self.img.height()))
            .min((bottom + 0.5).ceil().min(1e9) as i64);
        let mut next = 0;
        let mut active: Vec<(f64, f64, f64, f64)> = Vec::new();
        let mut xs: Vec<f64> = Vec::new();
        for py in first_row..last_row {
            let yc = py as f64 + 0.5;
            while next < edges.len() && edges[next].0 <= yc {
                active.push(edges[next]);
                next += 1;
            }
            active.retain(|e| e.1 > yc);
            xs.clear();
            xs.extend(active.iter().map(|e| e.2 + (yc - e.0) * e.3));
            xs.sort_by(f64::total_cmp);
            for pair in xs.chunks_exact(2) {
                let from = (pair[0] - 0.5).ceil().max(x0 as f64).max(0.0) as i64;
                let to = ((pair[1] - 0.5).floor().min(1e9) as i64)
                    .min(x1 - 1)
                    .min(i64::from(self.img.width()) - 1);
                for px in from..=to {
                    self.blend(px as u32, py as u32, c);
                }
            }
        }
    }
}

/// The clip box narrowed to the bounding box of `pts`.
fn bbox(pts: &[(f64, f64)], clip: (i64, i64, i64, i64)) -> (i64, i64, i64, i64) {
    let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
    for &(x, y) in pts {
        x0 = x0.min(x);
        y0 = y0.min(y);
        x1 = x1.max(x);
        y1 = y1.max(y);
    }
    let f = |v: f64| v.clamp(-1e9, 1e9) as i64;
    (
        f(x0.floor()).max(clip.0),
        f(y0.floor()).max(clip.1),
        (f(x1.ceil()) + 1).min(clip.2),
        (f(y1.ceil()) + 1).min(clip.3),
    )
}

/// Width in pixels of `s` in `font` at `scale`.
pub(crate) fn text_width(s: &str, font: &MonoFont<'_>, scale: i32) -> i32 {
    let per = font.character_size.width as i32 + font.character_spacing as i32;
    s.chars().count() as i32 * per * scale
}

/// Replaces common typographic characters outside Latin-1 by ASCII look-alikes, so they do not
/// print as `?` in the built-in fonts.
pub(crate) fn latin1(s: &str) -> String {
    s.chars()
        .flat_map(|ch| {
            let r: &str = match ch {
                '\u{2013}' | '\u{2014}' | '\u{2212}' => "-",
                '\u{2018}' | '\u{2019}' => "'",
                '\u{201C}' | '\u{201D}' => "\"",
                '\u{2026}' => "...",
                '\u{2022}' => "\u{b7}",
                '\u{2264}' => "<=",
                '\u{2265}' => ">=",
                _ => "",
            };
            if r.is_empty() {
                vec![ch]
            } else {
                r.chars().collect()
            }
        })
        .collect()
}

/// Greedy word wrap to at most `max_chars` per line (long words are cut).
pub(crate) fn wrap(s: &str, max_chars: usize) -> Vec<String> {
    let max_chars = max_chars.max(8);
    let mut lines = Vec::new();
    let mut cur = String::new();
    for word in s.split_whitespace() {
        let mut word = word.to_owned();
        while word.chars().count() > max_chars {
            if !cur.is_empty() {
                lines.push(std::mem::take(&mut cur));
            }
            let head: String = word.chars().take(max_chars).collect();
            word = word.chars().skip(max_chars).collect();
            lines.push(head);
        }
        let need = cur.chars().count() + usize::from(!cur.is_empty()) + word.chars().count();
        if need > max_chars && !cur.is_empty() {
            lines.push(std::mem::take(&mut cur));
        }
        if !cur.is_empty() {
            cur.push(' ');
        }
        cur.push_str(&word);
    }
    if !cur.is_empty() {
        lines.push(cur);
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wrapping_keeps_words_whole_and_lines_short() {
        let lines = wrap(
            "Decision support only: the search mission coordinator decides",
            20,
        );
        assert!(lines.iter().all(|l| l.chars().count() <= 20), "{lines:?}");
        assert_eq!(
            lines.join(" "),
            "Decision support only: the search mission coordinator decides"
        );
    }

    #[test]
    fn a_filled_square_covers_exactly_its_pixel_centres() {
        let mut c = Canvas::new(10, 10, [255, 255, 255, 255], 1);
        let ring = vec![(2.0, 2.0), (6.0, 2.0), (6.0, 5.0), (2.0, 5.0), (2.0, 2.0)];
        c.fill_rings(&[ring], [0, 0, 0, 255], (0, 0, 10, 10));
        let black = c.img.pixels().filter(|p| p.0[0] == 0).count();
        assert_eq!(black, 4 * 3);
        assert_eq!(c.img.get_pixel(2, 2).0[0], 0);
        assert_eq!(c.img.get_pixel(6, 2).0[0], 255);
    }

    #[test]
    fn scanline_fill_matches_a_point_in_polygon_test_of_every_pixel() {
        // Fast (edge table) against slow (even-odd crossing test of each pixel centre over all
        // edges), on a star with a hole.
        let star: Vec<(f64, f64)> = (0..=14)
            .map(|i| {
                let a = f64::from(i) / 14.0 * std::f64::consts::TAU;
                let r = if i % 2 == 0 { 38.0 } else { 15.3 };
                (50.2 + r * a.cos(), 49.7 + r * a.sin())
            })
            .collect();
        let hole = vec![
            (45.0, 45.0),
            (55.5, 45.0),
            (55.5, 54.0),
            (45.0, 54.0),
            (45.0, 45.0),
        ];
        let rings = vec![star, hole];
        let mut c = Canvas::new(100, 100, [255, 255, 255, 255], 1);
        c.fill_rings(&rings, [0, 0, 0, 255], (0, 0, 100, 100));
        for py in 0..100u32 {
            for px in 0..100u32 {
                let (x, y) = (f64::from(px) + 0.5, f64::from(py) + 0.5);
                let mut inside = false;
                for r in &rings {
                    for w in r.windows(2) {
                        let ((ax, ay), (bx, by)) = (w[0], w[1]);
                        if (ay <= y) != (by <= y) && x < ax + (y - ay) / (by - ay) * (bx - ax) {
                            inside = !inside;
                        }
                    }
                }
                assert_eq!(c.img.get_pixel(px, py).0[0] == 0, inside, "pixel {px},{py}");
            }
        }
    }
}
