//! The frame every plot is drawn in: size check, the bundled font, the title block and the
//! legend panel, text placement and the number format of ticks and labels.
//!
//! Pipeline stage: report writers (PNG plots). `render` draws into an RGB buffer and hands
//! it to `encode`; a panic inside the plotting library becomes an error.
//!
//! Text is set by `glyphs` (advance widths and kerning of the bundled font, sub-pixel pen
//! positions); the plotting library only asks it for sizes and hands it the strings.
//!
//! Font: DejaVu Sans, Bitstream Vera licence, see `assets/DejaVuSans-LICENSE.txt`.

use std::panic::{AssertUnwindSafe, catch_unwind};
use std::sync::OnceLock;

use anyhow::{Result, anyhow, ensure};
use plotters::coord::Shift;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{FontDesc, FontStyle};

use super::colour::{GRID, INK, LIGHT_GRID, MUTED};
use super::encode::encode_png;
use super::glyphs::{FONT_BYTES, Typeset, font_ok, measure};
use super::layout::PxBox;
use super::{MAX_PIXELS, MIN_PIXELS};

pub(super) type Area<'a> = DrawingArea<Typeset<'a>, Shift>;
pub(super) type F64Chart<'a, 'b> =
    ChartContext<'a, Typeset<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

const FAMILY: &str = "sans-serif";

/// Registers the bundled font once (the library's own text styles need a registered
/// family even though `glyphs` sets the text) and checks that it can be read.
fn ensure_font() -> Result<()> {
    static REGISTERED: OnceLock<bool> = OnceLock::new();
    let ok = *REGISTERED.get_or_init(|| {
        plotters::style::register_font(FAMILY, FontStyle::Normal, FONT_BYTES).is_ok()
    });
    ensure!(
        ok && font_ok(),
        "the bundled DejaVu Sans font could not be loaded"
    );
    Ok(())
}

/// Checks the size, draws into an RGB buffer and encodes it as PNG. A panic inside the
/// plotting library is turned into an error.
pub(super) fn render<F>(width: u32, height: u32, draw: F) -> Result<Vec<u8>>
where
    F: FnOnce(&Area<'_>) -> Result<()>,
{
    ensure!(
        (MIN_PIXELS..=MAX_PIXELS).contains(&width) && (MIN_PIXELS..=MAX_PIXELS).contains(&height),
        "plot size {width} × {height} px is outside {MIN_PIXELS}..={MAX_PIXELS} px per side"
    );
    ensure_font()?;
    let len = (width as usize) * (height as usize) * 3;
    let mut buf = vec![255u8; len];
    let outcome = catch_unwind(AssertUnwindSafe(|| -> Result<()> {
        let root =
            Typeset::new(BitMapBackend::with_buffer(&mut buf, (width, height))).into_drawing_area();
        // the buffer starts white, so no fill is needed
        draw(&root)?;
        root.present()?;
        Ok(())
    }));
    match outcome {
        Ok(r) => r?,
        Err(_) => return Err(anyhow!("the plotting library failed while drawing")),
    }
    encode_png(width, height, &buf)
}

/// Title block on top, a legend panel `panel_w` px wide on the right; returns
/// (plot area, panel).
pub(super) fn layout<'a>(
    root: &Area<'a>,
    title: &str,
    subtitle: &str,
    panel_w: u32,
) -> Result<(Area<'a>, Area<'a>)> {
    let (w, _) = root.dim_in_pixel();
    let (head, body) = root.split_vertically(58);
    let (hx, hy) = head.get_base_pixel();
    let max_w = w.saturating_sub(40) as i32;
    let title_style = text(22.0, INK);
    let t = fit(root, title, &title_style, max_w)?;
    tag(
        root,
        &t,
        (hx + 18, hy + 10),
        HPos::Left,
        VPos::Top,
        &title_style,
        false,
    )?;
    let sub_style = text(14.0, MUTED);
    let s = fit(root, subtitle, &sub_style, max_w)?;
    tag(
        root,
        &s,
        (hx + 18, hy + 38),
        HPos::Left,
        VPos::Top,
        &sub_style,
        false,
    )?;
    let (main, panel) = body.split_horizontally(w.saturating_sub(panel_w));
    Ok((main, panel))
}

/// Usable box of the right panel: (x, y, width, height) in backend pixels.
pub(super) fn panel_box(panel: &Area<'_>) -> (i32, i32, i32, i32) {
    let (x, y) = panel.get_base_pixel();
    let (w, h) = panel.dim_in_pixel();
    (x + 8, y + 12, w as i32 - 16, h as i32 - 24)
}

pub(super) fn bar_height(panel_h: i32) -> i32 {
    ((panel_h as f64) * 0.36).clamp(60.0, 300.0) as i32
}

pub(super) fn text(size: f64, colour: RGBColor) -> TextStyle<'static> {
    TextStyle {
        font: FontDesc::new(FontFamily::Name(FAMILY), size, FontStyle::Normal),
        color: colour.to_backend_color(),
        pos: Pos::new(HPos::Left, VPos::Top),
    }
}

/// Axes, grid lines and tick labels of a chart in the house style; `labels` sets how many
/// ticks to aim for on (x, y), `None` leaves the library's choice.
pub(super) fn draw_mesh(
    chart: &mut F64Chart<'_, '_>,
    x_desc: &str,
    y_desc: &str,
    labels: Option<(usize, usize)>,
) -> Result<()> {
    let label = |v: &f64| fmt_num(*v);
    let mut mesh = chart.configure_mesh();
    mesh.x_desc(x_desc)
        .y_desc(y_desc)
        .label_style(mesh_font(14.0))
        .axis_desc_style(mesh_font(15.0))
        .bold_line_style(GRID)
        .light_line_style(LIGHT_GRID)
        .axis_style(MUTED)
        .x_label_formatter(&label)
        .y_label_formatter(&label);
    if let Some((nx, ny)) = labels {
        mesh.x_labels(nx).y_labels(ny);
    }
    mesh.draw()?;
    Ok(())
}

fn mesh_font(size: f64) -> TextStyle<'static> {
    TextStyle {
        font: FontDesc::new(FontFamily::Name(FAMILY), size, FontStyle::Normal),
        color: INK.to_backend_color(),
        pos: Pos::default(),
    }
}

/// Width and height [px] of `s` set in `style` (the same layout the text is drawn with).
pub(super) fn text_size(_root: &Area<'_>, s: &str, style: &TextStyle<'_>) -> Result<(i32, i32)> {
    Ok(measure(s, style.font.get_size()))
}

/// Shortens `s` with an ellipsis until it is at most `max_w` pixels wide.
pub(super) fn fit(root: &Area<'_>, s: &str, style: &TextStyle<'_>, max_w: i32) -> Result<String> {
    if text_size(root, s, style)?.0 <= max_w {
        return Ok(s.to_string());
    }
    let mut chars: Vec<char> = s.chars().collect();
    while !chars.is_empty() {
        chars.pop();
        let t: String = chars.iter().collect::<String>() + "…";
        if text_size(root, &t, style)?.0 <= max_w {
            return Ok(t);
        }
    }
    Ok(String::new())
}

/// Draws text so that the side (`h`, `v`) of its box sits at pixel `at`, optionally on a
/// white box.
pub(super) fn tag(
    root: &Area<'_>,
    s: &str,
    at: (i32, i32),
    h: HPos,
    v: VPos,
    style: &TextStyle<'_>,
    boxed: bool,
) -> Result<()> {
    if s.is_empty() {
        return Ok(());
    }
    let (tw, th) = text_size(root, s, style)?;
    let x0 = match h {
        HPos::Left => at.0,
        HPos::Center => at.0 - tw / 2,
        HPos::Right => at.0 - tw,
    };
    let y0 = match v {
        VPos::Top => at.1,
        VPos::Center => at.1 - th / 2,
        VPos::Bottom => at.1 - th,
    };
    if boxed {
        root.draw(&Rectangle::new(
            [(x0 - 3, y0 - 2), (x0 + tw + 3, y0 + th + 3)],
            WHITE.mix(0.85).filled(),
        ))?;
    }
    let style = style.pos(Pos::new(HPos::Left, VPos::Top));
    root.draw(&Text::new(s.to_string(), (x0, y0), style))?;
    Ok(())
}

/// A label above the plot at pixel column `x` (the plot's top edge at `top`), fitted to
/// 160 px and set in the first of three staggered rows where it clears the labels already
/// placed (`row_end`: each row's right edge so far; the least full row when none is clear),
/// joined to the plot by a leader line of `leader`; the text is drawn in `ink`, measured in
/// `style` (same size).
pub(super) fn label_above(
    root: &Area<'_>,
    label: &str,
    (x, top): (i32, i32),
    (style, ink): (&TextStyle<'_>, &TextStyle<'_>),
    leader: RGBColor,
    row_end: &mut [i32; 3],
) -> Result<()> {
    let label = fit(root, label, style, 160)?;
    let (tw, _) = text_size(root, &label, style)?;
    let left = x - tw / 2;
    let row = (0..3)
        .find(|r| row_end[*r] + 6 < left)
        .unwrap_or_else(|| (0..3).min_by_key(|r| row_end[*r]).unwrap_or(0));
    row_end[row] = left + tw;
    let y_text = top - 6 - 17 * row as i32;
    root.draw(&PathElement::new(
        vec![(x, top), (x, y_text)],
        leader.stroke_width(1),
    ))?;
    tag(
        root,
        &label,
        (x, y_text),
        HPos::Center,
        VPos::Bottom,
        ink,
        true,
    )
}

/// The plotting area of a chart in image pixels.
pub(super) fn plot_box(chart: &F64Chart<'_, '_>) -> PxBox {
    let area = chart.plotting_area();
    let (x, y) = area.get_base_pixel();
    let (w, h) = area.dim_in_pixel();
    [x, y, x + w as i32, y + h as i32]
}

/// A grey note in the middle of an empty plotting area.
pub(super) fn empty_note(root: &Area<'_>, chart: &F64Chart<'_, '_>, note: &str) -> Result<()> {
    let (xr, yr) = (chart.x_range(), chart.y_range());
    let c = chart.backend_coord(&((xr.start + xr.end) / 2.0, (yr.start + yr.end) / 2.0));
    tag(
        root,
        note,
        c,
        HPos::Center,
        VPos::Center,
        &text(16.0, MUTED),
        true,
    )
}

pub(super) fn non_empty<'s>(s: &'s str, fallback: &'s str) -> &'s str {
    if s.trim().is_empty() { fallback } else { s }
}

/// Formats a tick or label value: up to four decimals, exponent form outside 1e-3..1e5.
pub(super) fn fmt_num(v: f64) -> String {
    if !v.is_finite() {
        return "n/a".to_string();
    }
    let a = v.abs();
    if a < 1e-12 {
        return "0".to_string();
    }
    if !(1e-3..1e5).contains(&a) {
        return format!("{v:.1e}").replace(".0e", "e");
    }
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}
