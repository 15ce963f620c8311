//! Text set in the bundled font: the width of a string (advance widths and kerning pairs
//! of the font, pen positions kept in fractions of a pixel) and a drawing backend that
//! draws every text of a plot (labels, ticks, axis names) with that layout.
//!
//! Pipeline stage: report writers (PNG plots).
//!
//! Why: the plotting library's own text path places each glyph at the pen position cut to
//! a whole pixel and drops the glyph's left side bearing, so letters with a wide bearing
//! (l, i, r, t) sit too far left and the gaps between letters vary by up to a pixel and a
//! half at 13 px. Here each glyph is outlined at its exact pen position (advance + kerning,
//! sub-pixel) with its bearing, and its coverage is blended into the picture.
//!
//! Layout of one line of text at size h [px] (the font scaled so that ascent − descent = h):
//! box width = Σ advance + Σ kern over the glyphs [px]; box height = ⌈ascent − descent⌉ [px];
//! the baseline sits `ascent` below the top of the box.
//!
//! Font: DejaVu Sans, Bitstream Vera licence, see `assets/DejaVuSans-LICENSE.txt`.

use std::sync::OnceLock;

use ab_glyph::{Font, FontRef, GlyphId, PxScale, ScaleFont, point};
use plotters::backend::BitMapBackend;
use plotters::prelude::DrawingBackend;
use plotters_backend::text_anchor::{HPos, VPos};
use plotters_backend::{
    BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingErrorKind,
};

/// The bundled font file.
pub(super) static FONT_BYTES: &[u8] = include_bytes!("../../../assets/DejaVuSans.ttf");

/// The bundled font, parsed once; None if it cannot be read.
fn font() -> Option<&'static FontRef<'static>> {
    static FONT: OnceLock<Option<FontRef<'static>>> = OnceLock::new();
    FONT.get_or_init(|| FontRef::try_from_slice(FONT_BYTES).ok())
        .as_ref()
}

/// Whether the bundled font can be used.
pub(super) fn font_ok() -> bool {
    font().is_some()
}

/// One glyph placed on a line: its id and pen position from the left of the box [px].
struct Placed {
    id: GlyphId,
    x: f32,
}

/// Pen positions of the glyphs of `s` at size `size` [px] and the advance of the whole
/// line [px] (Σ advance + Σ kern).
fn set_line(f: &FontRef<'static>, s: &str, size: f32) -> (Vec<Placed>, f32) {
    let sf = f.as_scaled(PxScale::from(size));
    let mut out = Vec::with_capacity(s.len());
    let mut pen = 0.0f32;
    let mut prev: Option<GlyphId> = None;
    for c in s.chars() {
        let id = sf.glyph_id(c);
        if let Some(p) = prev {
            pen += sf.kern(p, id);
        }
        out.push(Placed { id, x: pen });
        pen += sf.h_advance(id);
        prev = Some(id);
    }
    (out, pen)
}

/// Width and height [px] of the box of `s` set at `size` [px]: the width rounded up, the
/// height ⌈ascent − descent⌉ (the same for every string of that size).
pub(super) fn measure(s: &str, size: f64) -> (i32, i32) {
    let Some(f) = font() else {
        return (0, 0);
    };
    let size = size.clamp(1.0, 512.0) as f32;
    let (_, w) = set_line(f, s, size);
    let sf = f.as_scaled(PxScale::from(size));
    let h = (sf.ascent() - sf.descent()).ceil();
    (w.ceil() as i32, h as i32)
}

/// A bitmap backend whose text is set by [`measure`]'s layout; everything else is passed
/// to the bitmap backend unchanged.
pub(super) struct Typeset<'a> {
    inner: BitMapBackend<'a>,
}

impl<'a> Typeset<'a> {
    pub(super) fn new(inner: BitMapBackend<'a>) -> Self {
        Typeset { inner }
    }
}

type Err = <BitMapBackend<'static> as DrawingBackend>::ErrorType;

impl DrawingBackend for Typeset<'_> {
    type ErrorType = Err;

    fn get_size(&self) -> (u32, u32) {
        self.inner.get_size()
    }
    fn ensure_prepared(&mut self) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.ensure_prepared()
    }
    fn present(&mut self) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.present()
    }
    fn draw_pixel(
        &mut self,
        point: BackendCoord,
        color: BackendColor,
    ) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.draw_pixel(point, color)
    }
    fn draw_line<S: BackendStyle>(
        &mut self,
        from: BackendCoord,
        to: BackendCoord,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.draw_line(from, to, style)
    }
    fn draw_rect<S: BackendStyle>(
        &mut self,
        upper_left: BackendCoord,
        bottom_right: BackendCoord,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.draw_rect(upper_left, bottom_right, style, fill)
    }
    fn draw_path<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.draw_path(path, style)
    }
    fn draw_circle<S: BackendStyle>(
        &mut self,
        center: BackendCoord,
        radius: u32,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.draw_circle(center, radius, style, fill)
    }
    fn fill_polygon<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        vert: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.fill_polygon(vert, style)
    }
    fn blit_bitmap(
        &mut self,
        pos: BackendCoord,
        size: (u32, u32),
        src: &[u8],
    ) -> Result<(), DrawingErrorKind<Err>> {
        self.inner.blit_bitmap(pos, size, src)
    }

    fn estimate_text_size<T: BackendTextStyle>(
        &self,
        text: &str,
        style: &T,
    ) -> Result<(u32, u32), DrawingErrorKind<Err>> {
        let (w, h) = measure(text, style.size());
        Ok((w.max(0) as u32, h.max(0) as u32))
    }

    /// Sets `text` at `pos` (the anchor of the style), each glyph at its sub-pixel pen
    /// position with its side bearing, turned by the style's transform.
    fn draw_text<T: BackendTextStyle>(
        &mut self,
        text: &str,
        style: &T,
        pos: BackendCoord,
    ) -> Result<(), DrawingErrorKind<Err>> {
        let colour = style.color();
        let Some(f) = font() else {
            return Ok(());
        };
        if colour.alpha == 0.0 || text.is_empty() {
            return Ok(());
        }
        let size = style.size().clamp(1.0, 512.0) as f32;
        let (glyphs, _) = set_line(f, text, size);
        let (w, h) = measure(text, f64::from(size));
        let dx = match style.anchor().h_pos {
            HPos::Left => 0,
            HPos::Center => -w / 2,
            HPos::Right => -w,
        };
        let dy = match style.anchor().v_pos {
            VPos::Top => 0,
            VPos::Center => -h / 2,
            VPos::Bottom => -h,
        };
        let ascent = f.as_scaled(PxScale::from(size)).ascent();
        let trans = style.transform();
        let (iw, ih) = self.get_size();
        let mut pixels: Vec<(i32, i32, f32)> = Vec::new();
        for g in glyphs {
            let glyph = g.id.with_scale_and_position(size, point(g.x, ascent));
            let Some(outline) = f.outline_glyph(glyph) else {
                continue;
            };
            let b = outline.px_bounds();
            outline.draw(|x, y, c| {
                pixels.push((b.min.x as i32 + x as i32, b.min.y as i32 + y as i32, c));
            });
        }
        for (x, y, c) in pixels {
            let c = c.clamp(0.0, 1.0);
            if c <= 0.0 {
                continue;
            }
            let (tx, ty) = trans.transform(x + dx, y + dy);
            let (px, py) = (pos.0 + tx, pos.1 + ty);
            if px < 0 || py < 0 || px >= iw as i32 || py >= ih as i32 {
                continue;
            }
            self.inner.draw_pixel(
                (px, py),
                BackendColor {
                    alpha: colour.alpha * f64::from(c),
                    rgb: colour.rgb,
                },
            )?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The pen advances by the font's advance widths plus its kerning pairs: "AV" is
    /// narrower than "A" and "V" set apart (DejaVu Sans kerns the pair), and the width
    /// of a string is the sum over its glyphs, not a whole pixel per glyph.
    #[test]
    fn widths_follow_advances_and_kerning() {
        let f = font().unwrap();
        let sf = f.as_scaled(PxScale::from(13.0));
        let (a, v) = (sf.glyph_id('A'), sf.glyph_id('V'));
        let apart = sf.h_advance(a) + sf.h_advance(v);
        let (_, av) = set_line(f, "AV", 13.0);
        assert!(sf.kern(a, v) < 0.0, "DejaVu Sans kerns A–V");
        assert!((av - (apart + sf.kern(a, v))).abs() < 1e-4 && av < apart);
        // ten 'l' advance exactly ten times one, with no rounding per glyph
        let (_, one) = set_line(f, "l", 13.0);
        let (_, ten) = set_line(f, "llllllllll", 13.0);
        assert!((ten - 10.0 * one).abs() < 1e-3, "{ten} vs {one}");
        assert!(one.fract() != 0.0, "advance kept in fractions of a pixel");
        assert_eq!(measure("llllllllll", 13.0).0, ten.ceil() as i32);
        // every string of one size has the same box height
        assert_eq!(measure("x", 13.0).1, measure("Ågy", 13.0).1);
    }

    /// Letters set at sub-pixel pen positions sit evenly: the ink centres of ten l's at
    /// 40 px (advance ≈ 9.5 px) are one advance apart to within a third of a pixel, where
    /// pen positions cut to whole pixels would make the gaps differ by a pixel.
    #[test]
    fn stems_are_evenly_spaced() {
        use super::super::frame::{render, tag, text};
        use super::super::testkit::decode;
        use plotters::style::RGBColor;
        let png = render(600, 320, |root| {
            tag(
                root,
                "llllllllll",
                (20, 20),
                HPos::Left,
                VPos::Top,
                &text(40.0, RGBColor(0, 0, 0)),
                false,
            )
        })
        .unwrap();
        let (w, _, rgb) = decode(&png);
        let ink = |x: usize| -> f64 {
            (20..70)
                .map(|y| 255.0 - f64::from(rgb[(y * w as usize + x) * 3]))
                .sum()
        };
        let cols: Vec<f64> = (0..w as usize).map(ink).collect();
        let mut centres = Vec::new();
        let mut x = 0;
        while x < cols.len() {
            if cols[x] > 0.0 {
                let start = x;
                while x < cols.len() && cols[x] > 0.0 {
                    x += 1;
                }
                let (m, c) = (start..x).fold((0.0, 0.0), |(m, c), k| {
                    (m + cols[k], c + cols[k] * k as f64)
                });
                centres.push(c / m);
            }
            x += 1;
        }
        assert_eq!(centres.len(), 10, "{centres:?}");
        let gaps: Vec<f64> = centres.windows(2).map(|p| p[1] - p[0]).collect();
        let (_, one) = set_line(font().unwrap(), "l", 40.0);
        for g in &gaps {
            assert!((g - f64::from(one)).abs() < 0.34, "{gaps:?} vs {one}");
        }
    }
}
