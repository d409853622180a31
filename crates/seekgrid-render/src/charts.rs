//! Charts of a review ([`seekgrid_engine::review::Review`]) as PNG pictures:
//!
//! * `review-pos.png`: cumulative POS over time, with the cumulative POS of the optimal
//!   allocation of each period's effort (the counterfactual chain) where it was computed;
//! * `review-rank.png`: the share of the belief rated above the found position over time;
//! * `review-scores.png`: each analyst's log score at the found position, with the pool's;
//! * `review-bias.png`: each analyst's bias on a compass: the bearing and distance from the
//!   mean of their map to the found position.
//!
//! Axes, grid lines, series and tick numbers are drawn with the `plotters` crate on its
//! in-memory bitmap backend (its `ab_glyph` feature, with DejaVu Sans embedded from the `dejavu`
//! crate: no system font library). Words (titles, axis titles, legends, notes, the caution) are
//! set by this module with `ab_glyph` directly, because plotters 0.3.7 drops each glyph's
//! left side bearing, which spaces letters unevenly ("INVEN TED"). Pictures are encoded with
//! the `image` crate. Every chart carries a title, the incident's title, axis titles with units,
//! a legend where there is more than one series, and the caution.

use crate::heatmap::with_text_chunk;
use crate::summary::CAUTION;
use crate::{OutputDir, RenderError};
use ab_glyph::{Font, FontRef, PxScale, ScaleFont, point};
use plotters::coord::Shift;
use plotters::coord::types::RangedCoordf64;
use plotters::prelude::*;
use plotters::style::FontStyle;
use seekgrid_engine::review::Review;
use seekgrid_incident::model::Time;

/// Width of every chart, pixels.
const WIDTH: u32 = 1100;
/// Height of the time charts, pixels.
const HEIGHT: u32 = 660;
/// Height of the title block at the top, pixels.
const HEADER: u32 = 74;
/// Height of the caution block at the bottom, pixels.
const FOOTER: u32 = 56;
/// The font family name the charts register for plotters' tick numbers.
const FONT: &str = "sans-serif";
/// Text sizes, pixels.
const TITLE_PX: f32 = 25.0;
const SUBTITLE_PX: f32 = 18.0;
const AXIS_PX: f32 = 18.0;
const TEXT_PX: f32 = 16.0;
const TICK_PX: u32 = 16;

/// Colours: blue for what was done, orange for the optimum and the pool, grey for guides.
const DONE: RGBColor = RGBColor(31, 119, 180);
const OPTIMAL: RGBColor = RGBColor(230, 115, 0);
const GUIDE: RGBColor = RGBColor(150, 150, 150);
const INK: RGBColor = RGBColor(30, 30, 30);
const FAINT: RGBColor = RGBColor(90, 90, 90);

/// The charts [`write_review_charts`] can create, in order.
pub const CHART_FILES: [&str; 4] = [
    "review-pos.png",
    "review-rank.png",
    "review-scores.png",
    "review-bias.png",
];

/// A chart as PNG bytes with its file name.
#[derive(Debug, Clone)]
pub struct Chart {
    /// File name (one of [`CHART_FILES`]).
    pub name: &'static str,
    /// The PNG stream.
    pub png: Vec<u8>,
}

fn chart_error<E: std::fmt::Debug>(e: E) -> RenderError {
    RenderError::Chart(format!("{e:?}"))
}

/// Horizontal anchor of a label.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Across {
    Left,
    Centre,
    Right,
}

/// Vertical anchor of a label.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Down {
    Top,
    Middle,
    Bottom,
}

/// A line of text to set on the picture once plotters is done, in picture pixels.
#[derive(Debug, Clone)]
struct Label {
    text: String,
    x: i32,
    y: i32,
    px: f32,
    colour: RGBColor,
    across: Across,
    down: Down,
    /// Set reading upward (rotated a quarter turn counter-clockwise), for a y-axis title.
    upward: bool,
}

/// The words of a chart: the font, and the labels set after plotters has drawn.
struct Words {
    font: FontRef<'static>,
    labels: Vec<Label>,
}

impl Words {
    fn new() -> Result<Self, RenderError> {
        let font = FontRef::try_from_slice(dejavu::sans::regular()).map_err(|_| {
            RenderError::Chart("the embedded DejaVu Sans font cannot be read".into())
        })?;
        Ok(Self {
            font,
            labels: Vec::new(),
        })
    }

    /// Width of `text` at `px`, pixels.
    fn width(&self, text: &str, px: f32) -> f32 {
        let f = self.font.as_scaled(PxScale::from(px));
        let mut w = 0.0;
        let mut prev = None;
        for c in text.chars() {
            let id = f.glyph_id(c);
            if let Some(p) = prev {
                w += f.kern(p, id);
            }
            w += f.h_advance(id);
            prev = Some(id);
        }
        w
    }

    /// Queues a label.
    #[allow(clippy::too_many_arguments)]
    fn put(
        &mut self,
        text: impl Into<String>,
        (x, y): (i32, i32),
        px: f32,
        colour: RGBColor,
        across: Across,
        down: Down,
    ) {
        self.labels.push(Label {
            text: text.into(),
            x,
            y,
            px,
            colour,
            across,
            down,
            upward: false,
        });
    }

    /// Queues a y-axis title reading upward, centred on (x, y).
    fn put_upward(&mut self, text: impl Into<String>, (x, y): (i32, i32), px: f32) {
        self.labels.push(Label {
            text: text.into(),
            x,
            y,
            px,
            colour: INK,
            across: Across::Centre,
            down: Down::Middle,
            upward: true,
        });
    }

    /// `text` split into lines no wider than `max_px` at `px`, at spaces.
    fn wrap(&self, text: &str, px: f32, max_px: f32) -> Vec<String> {
        let mut lines = vec![String::new()];
        for word in text.split_whitespace() {
            let last = lines.last_mut().expect("lines is never empty");
            let candidate = if last.is_empty() {
                word.to_owned()
            } else {
                format!("{last} {word}")
            };
            if !last.is_empty() && self.width(&candidate, px) > max_px {
                lines.push(word.to_owned());
            } else {
                *last = candidate;
            }
        }
        lines
    }

    /// Sets every queued label on the RGB picture `buf` of `width` x `height`.
    fn draw(&self, buf: &mut [u8], width: u32, height: u32) {
        for l in &self.labels {
            let f = self.font.as_scaled(PxScale::from(l.px));
            let ascent = f.ascent();
            let line_h = (ascent - f.descent()).ceil().max(1.0);
            let w = self.width(&l.text, l.px).ceil().max(1.0);
            // Coverage of the line in its own box, w x line_h.
            let (bw, bh) = (w as usize + 2, line_h as usize + 2);
            let mut cover = vec![0f32; bw * bh];
            let mut caret = 0.0;
            let mut prev = None;
            for c in l.text.chars() {
                let id = f.glyph_id(c);
                if let Some(p) = prev {
                    caret += f.kern(p, id);
                }
                let glyph = id.with_scale_and_position(f.scale(), point(caret, ascent));
                caret += f.h_advance(id);
                prev = Some(id);
                if let Some(outline) = self.font.outline_glyph(glyph) {
                    let b = outline.px_bounds();
                    outline.draw(|gx, gy, v| {
                        let x = b.min.x as i32 + gx as i32;
                        let y = b.min.y as i32 + gy as i32;
                        if x >= 0 && y >= 0 && (x as usize) < bw && (y as usize) < bh {
                            let cell = &mut cover[y as usize * bw + x as usize];
                            *cell = (*cell + v).min(1.0);
                        }
                    });
                }
            }
            // Where the box goes, and how its pixels map onto the picture.
            let (out_w, out_h) = if l.upward { (bh, bw) } else { (bw, bh) };
            let x0 = match l.across {
                Across::Left => l.x,
                Across::Centre => l.x - out_w as i32 / 2,
                Across::Right => l.x - out_w as i32,
            };
            let y0 = match l.down {
                Down::Top => l.y,
                Down::Middle => l.y - out_h as i32 / 2,
                Down::Bottom => l.y - out_h as i32,
            };
            for v in 0..bh {
                for u in 0..bw {
                    let a = cover[v * bw + u];
                    if a <= 0.0 {
                        continue;
                    }
                    let (px, py) = if l.upward {
                        (x0 + v as i32, y0 + (bw - 1 - u) as i32)
                    } else {
                        (x0 + u as i32, y0 + v as i32)
                    };
                    if px < 0 || py < 0 || px >= width as i32 || py >= height as i32 {
                        continue;
                    }
                    let i = 3 * (py as usize * width as usize + px as usize);
                    for (k, c) in [l.colour.0, l.colour.1, l.colour.2].into_iter().enumerate() {
                        let old = f32::from(buf[i + k]);
                        buf[i + k] = (old + (f32::from(c) - old) * a).round() as u8;
                    }
                }
            }
        }
    }
}

/// One entry of a legend: its text, colour, and whether its line is dashed.
struct Entry {
    text: String,
    colour: RGBColor,
    dashed: bool,
}

/// Draws a legend box with its top-left corner at `at` (picture pixels): a line sample and
/// the text of each entry, on a white box with a grey border.
fn legend(
    area: &DrawingArea<BitMapBackend<'_>, Shift>,
    words: &mut Words,
    at: (i32, i32),
    entries: &[Entry],
) -> Result<(), RenderError> {
    let base = area.get_base_pixel();
    let rel = |(x, y): (i32, i32)| (x - base.0, y - base.1);
    let row = 26;
    let text_w = entries
        .iter()
        .map(|e| words.width(&e.text, TEXT_PX))
        .fold(0.0_f32, f32::max) as i32;
    let (w, h) = (52 + text_w + 12, 10 + row * entries.len() as i32);
    area.draw(&Rectangle::new(
        [rel(at), rel((at.0 + w, at.1 + h))],
        WHITE.mix(0.92).filled(),
    ))
    .map_err(chart_error)?;
    area.draw(&Rectangle::new(
        [rel(at), rel((at.0 + w, at.1 + h))],
        GUIDE.stroke_width(1),
    ))
    .map_err(chart_error)?;
    for (k, e) in entries.iter().enumerate() {
        let y = at.1 + 5 + row * k as i32 + row / 2;
        let style = e.colour.stroke_width(3);
        if e.dashed {
            for s in 0..3 {
                let x = at.0 + 10 + 11 * s;
                area.draw(&PathElement::new(vec![rel((x, y)), rel((x + 7, y))], style))
                    .map_err(chart_error)?;
            }
        } else {
            area.draw(&PathElement::new(
                vec![rel((at.0 + 10, y)), rel((at.0 + 40, y))],
                style,
            ))
            .map_err(chart_error)?;
        }
        words.put(
            e.text.clone(),
            (at.0 + 50, y),
            TEXT_PX,
            INK,
            Across::Left,
            Down::Middle,
        );
    }
    Ok(())
}

/// A line of text on a white box with a grey border, top-left corner at `at` (picture
/// pixels), so that it stays readable over grid lines and series.
fn note(
    area: &DrawingArea<BitMapBackend<'_>, Shift>,
    words: &mut Words,
    at: (i32, i32),
    text: &str,
) -> Result<(), RenderError> {
    let base = area.get_base_pixel();
    let w = words.width(text, TEXT_PX) as i32 + 20;
    let corners = [
        (at.0 - base.0, at.1 - base.1),
        (at.0 + w - base.0, at.1 + 28 - base.1),
    ];
    area.draw(&Rectangle::new(corners, WHITE.mix(0.92).filled()))
        .map_err(chart_error)?;
    area.draw(&Rectangle::new(corners, GUIDE.stroke_width(1)))
        .map_err(chart_error)?;
    words.put(
        text,
        (at.0 + 10, at.1 + 14),
        TEXT_PX,
        FAINT,
        Across::Left,
        Down::Middle,
    );
    Ok(())
}

/// Hours from the review's reference time.
fn hours(r: &Review, t: Time) -> f64 {
    (t - r.reference_time).num_milliseconds() as f64 / 3.6e6
}

/// A title shortened to `max` characters.
fn shorten(s: &str, max: usize) -> String {
    if s.chars().count() <= max {
        s.to_owned()
    } else {
        let mut t: String = s.chars().take(max.saturating_sub(1)).collect();
        t.push('…');
        t
    }
}

/// Renders a chart on a white RGB canvas of `width` x `height`: the title block (`title`,
/// then the incident's title), the body drawn by `draw`, and the caution; encodes it as PNG.
fn render(
    width: u32,
    height: u32,
    title: &str,
    incident: &str,
    draw: impl FnOnce(&DrawingArea<BitMapBackend<'_>, Shift>, &mut Words) -> Result<(), RenderError>,
) -> Result<Vec<u8>, RenderError> {
    // plotters sets the tick numbers in its own font table; registering again replaces the
    // entry with the same font, so doing it for every chart is harmless.
    plotters::style::register_font(FONT, FontStyle::Normal, dejavu::sans::regular())
        .map_err(|_| RenderError::Chart("the embedded DejaVu Sans font cannot be read".into()))?;
    let mut words = Words::new()?;
    words.put(title, (18, 12), TITLE_PX, INK, Across::Left, Down::Top);
    words.put(
        format!("Incident: {}", shorten(incident, 100)),
        (18, 44),
        SUBTITLE_PX,
        FAINT,
        Across::Left,
        Down::Top,
    );
    let caution = words.wrap(&format!("CAUTION: {CAUTION}"), 15.0, width as f32 - 36.0);
    for (k, line) in caution.iter().enumerate() {
        words.put(
            line.clone(),
            (18, (height - FOOTER) as i32 + 8 + 21 * k as i32),
            15.0,
            INK,
            Across::Left,
            Down::Top,
        );
    }
    let mut buf = vec![255u8; (width * height * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut buf, (width, height)).into_drawing_area();
        root.fill(&WHITE).map_err(chart_error)?;
        let (_, rest) = root.split_vertically(HEADER);
        let (body, _) = rest.split_vertically(height - HEADER - FOOTER);
        draw(&body, &mut words)?;
        root.present().map_err(chart_error)?;
    }
    words.draw(&mut buf, width, height);
    let mut png = Vec::new();
    use image::ImageEncoder as _;
    image::codecs::png::PngEncoder::new(&mut png)
        .write_image(&buf, width, height, image::ExtendedColorType::Rgb8)
        .map_err(|e| RenderError::Png(e.to_string()))?;
    Ok(png)
}

/// A chart over a time axis: the x range from 0 (or the earliest row) to the end, with a margin.
fn time_range(r: &Review) -> std::ops::Range<f64> {
    let first = r
        .timeline
        .iter()
        .map(|row| row.hours_since_reference)
        .fold(0.0_f64, f64::min);
    let last = hours(r, r.end).max(first + 1.0);
    first..last + 0.02 * (last - first)
}

/// A step line through (time, value) points: each value holds until the next time; the last
/// holds until `until`.
fn steps(points: &[(f64, f64)], until: f64) -> Vec<(f64, f64)> {
    let mut out = Vec::with_capacity(2 * points.len() + 1);
    for (i, &(t, v)) in points.iter().enumerate() {
        if i > 0 {
            out.push((t, points[i - 1].1));
        }
        out.push((t, v));
    }
    if let Some(&(t, v)) = points.last()
        && until > t
    {
        out.push((until, v));
    }
    out
}

type TimeChart<'a, 'b> =
    ChartContext<'a, BitMapBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// The axes of a time chart with their titles.
fn time_axes<'a, 'b>(
    body: &'a DrawingArea<BitMapBackend<'b>, Shift>,
    words: &mut Words,
    r: &Review,
    y: std::ops::Range<f64>,
    y_title: &str,
    y_format: &dyn Fn(&f64) -> String,
) -> Result<TimeChart<'a, 'b>, RenderError> {
    let mut chart = ChartBuilder::on(body)
        .margin_left(14)
        .margin_right(26)
        .margin_top(8)
        .x_label_area_size(62)
        .y_label_area_size(96)
        .build_cartesian_2d(time_range(r), y)
        .map_err(chart_error)?;
    chart
        .configure_mesh()
        .light_line_style(WHITE.mix(0.0))
        .bold_line_style(GUIDE.mix(0.35))
        .y_label_formatter(y_format)
        .x_label_formatter(&|v| format!("{v:.1}"))
        .label_style((FONT, TICK_PX))
        .draw()
        .map_err(chart_error)?;
    let (xs, ys) = chart.plotting_area().get_pixel_range();
    words.put(
        format!(
            "hours since the reference time, {} UTC",
            r.reference_time.format("%Y-%m-%d %H:%M")
        ),
        ((xs.start + xs.end) / 2, ys.end + 34),
        AXIS_PX,
        INK,
        Across::Centre,
        Down::Top,
    );
    words.put_upward(y_title, (xs.start - 80, (ys.start + ys.end) / 2), AXIS_PX);
    Ok(chart)
}

/// The vertical "found" line, labelled, when the object was found.
fn found_marker(
    chart: &mut TimeChart<'_, '_>,
    words: &mut Words,
    r: &Review,
    y_top: f64,
) -> Result<(), RenderError> {
    if let Some(truth) = &r.truth {
        let t = hours(r, truth.time);
        chart
            .draw_series(DashedLineSeries::new(
                vec![(t, 0.0), (t, y_top)],
                6,
                4,
                GUIDE.stroke_width(2),
            ))
            .map_err(chart_error)?;
        let (x, y) = chart.backend_coord(&(t, y_top));
        words.put(
            "found",
            (x - 6, y + 4),
            TEXT_PX,
            FAINT,
            Across::Right,
            Down::Top,
        );
    }
    Ok(())
}

/// `review-pos.png`: cumulative POS over time, and the counterfactual chain's.
///
/// # Errors
/// [`RenderError::Chart`] or [`RenderError::Png`] when drawing or encoding fails.
pub fn pos_chart(r: &Review) -> Result<Vec<u8>, RenderError> {
    let done: Vec<(f64, f64)> = r
        .timeline
        .iter()
        .map(|row| (row.hours_since_reference, row.pos_cumulative))
        .collect();
    // The chain's cumulative POS after period k counts periods 1..=k, so it is drawn when all
    // of them have ended: at the latest end so far. Periods that overlap (a later period
    // ending first) would otherwise make the line run back down in time.
    let mut optimal: Vec<(f64, f64)> = vec![(0.0, 0.0)];
    let mut ended = 0.0_f64;
    for p in &r.periods {
        if let Some(o) = &p.optimal {
            ended = ended.max(hours(r, p.end));
            optimal.push((ended, o.pos_cumulative_chain));
        }
    }
    let top = done
        .iter()
        .chain(&optimal)
        .map(|p| p.1)
        .fold(0.0_f64, f64::max);
    let y_top = (((top * 1.25).max(0.05) * 20.0).ceil() / 20.0).min(1.0);
    let end = hours(r, r.end);
    render(
        WIDTH,
        HEIGHT,
        "Cumulative probability of success (POS) over time",
        &r.title,
        |body, words| {
            let mut chart = time_axes(body, words, r, 0.0..y_top, "cumulative POS", &|v| {
                format!("{v:.2}")
            })?;
            chart
                .draw_series(LineSeries::new(steps(&done, end), DONE.stroke_width(3)))
                .map_err(chart_error)?;
            let mut entries = vec![Entry {
                text: "the searches as done".into(),
                colour: DONE,
                dashed: false,
            }];
            if optimal.len() > 1 {
                chart
                    .draw_series(DashedLineSeries::new(
                        steps(&optimal, end),
                        10,
                        6,
                        OPTIMAL.stroke_width(3),
                    ))
                    .map_err(chart_error)?;
                chart
                    .draw_series(
                        optimal[1..]
                            .iter()
                            .map(|&p| Circle::new(p, 5, OPTIMAL.filled())),
                    )
                    .map_err(chart_error)?;
                entries.push(Entry {
                    text: "the same effort allocated optimally, period after period (dots: period ends)"
                        .into(),
                    colour: OPTIMAL,
                    dashed: true,
                });
            }
            found_marker(&mut chart, words, r, y_top)?;
            let (xs, ys) = chart.plotting_area().get_pixel_range();
            // Where the searches as done beat the optimal allocation of their effort, say why
            // that can be, so the optimal line is not read as a bound it is not.
            let beaten = r.periods.iter().any(|p| {
                p.optimal
                    .as_ref()
                    .is_some_and(|o| p.pos > o.pos_same_belief + 1e-9)
            });
            if beaten {
                let text = "Done above the optimal line: possible with tracks, inverse-cube or definite-range sweeps, drift, overlapping periods";
                let w = words.width(text, TEXT_PX) as i32 + 20;
                note(
                    body,
                    words,
                    ((xs.end - w - 12).max(xs.start + 12), ys.end - 50),
                    text,
                )?;
            }
            legend(body, words, (xs.start + 12, ys.start + 10), &entries)
        },
    )
}

/// `review-rank.png`: the share of the belief rated above the found position over time;
/// `None` without a found position inside the grid.
///
/// # Errors
/// As [`pos_chart`].
pub fn rank_chart(r: &Review) -> Result<Option<Vec<u8>>, RenderError> {
    let points: Vec<(f64, f64)> = r
        .timeline
        .iter()
        .filter_map(|row| {
            row.truth
                .map(|t| (row.hours_since_reference, t.rank.mass_above))
        })
        .collect();
    if points.is_empty() {
        return Ok(None);
    }
    render(
        WIDTH,
        HEIGHT,
        "Rank of the found position: probability the belief put on denser cells (lower is better)",
        &r.title,
        |body, words| {
            let mut chart = time_axes(
                body,
                words,
                r,
                0.0..1.0,
                "share of probability in denser cells",
                &|v| format!("{:.0} %", v * 100.0),
            )?;
            chart
                .draw_series(LineSeries::new(points.clone(), DONE.stroke_width(3)))
                .map_err(chart_error)?;
            chart
                .draw_series(points.iter().map(|&p| Circle::new(p, 4, DONE.filled())))
                .map_err(chart_error)?;
            found_marker(&mut chart, words, r, 1.0)?;
            let (xs, ys) = chart.plotting_area().get_pixel_range();
            // The note goes where the line is not: at the bottom when the found position
            // ranked low (much probability above it), at the top otherwise.
            let mean_above = points.iter().map(|p| p.1).sum::<f64>() / points.len() as f64;
            let y = if mean_above > 0.5 {
                ys.end - 50
            } else {
                ys.start + 10
            };
            note(
                body,
                words,
                (xs.start + 12, y),
                "0 % = the found position lay in the densest cell of the belief at that time",
            )?;
            Ok(())
        },
    )
    .map(Some)
}

/// `review-scores.png`: a bar per analyst of the log score at the found position, and the
/// pool's as a dashed line; `None` without a pool score or analysts' scores.
///
/// # Errors
/// As [`pos_chart`].
pub fn scores_chart(r: &Review) -> Result<Option<Vec<u8>>, RenderError> {
    let Some(scores) = ScoreBars::of(r) else {
        return Ok(None);
    };
    let height = HEIGHT.max(HEADER + FOOTER + 150 + 64 * scores.bars.len() as u32);
    render(
        WIDTH,
        height,
        "Each analyst's log score at the found position, with the pooled map's",
        &r.title,
        |body, words| {
            let mut chart = score_axes(body, words, &scores)?;
            let values = draw_score_bars(&mut chart, words, &scores)?;
            let entries = draw_pool_line(&mut chart, &scores)?;
            put_value_labels(body, words, values)?;
            let (xs, ys) = chart.plotting_area().get_pixel_range();
            legend(body, words, (xs.start, ys.start - 44), &entries)
        },
    )
    .map(Some)
}

/// What the scores chart draws: each analyst's log score, the pool's, and the x range.
struct ScoreBars {
    /// Analyst id and log score, in file order (only analysts with a score).
    bars: Vec<(String, f64)>,
    /// The pooled map's log score.
    pool: f64,
    /// Left end of the x axis (log score): the lowest finite score with a margin, floored.
    lo: f64,
    /// Right end of the x axis: the highest finite score with a margin, ceiled.
    hi: f64,
}

impl ScoreBars {
    /// The scores of a review; `None` without a pool score or analysts' scores.
    fn of(r: &Review) -> Option<Self> {
        let bars: Vec<(String, f64)> = r
            .analysts
            .iter()
            .filter_map(|a| a.log_score.map(|s| (a.id.clone(), s)))
            .collect();
        let pool = r.pool.as_ref()?.log_score;
        if bars.is_empty() {
            return None;
        }
        let finite: Vec<f64> = bars
            .iter()
            .map(|b| b.1)
            .chain(std::iter::once(pool))
            .filter(|v| v.is_finite())
            .collect();
        let lo = finite.iter().copied().fold(0.0_f64, f64::min);
        let hi = finite.iter().copied().fold(0.0_f64, f64::max);
        let pad = 0.1 * (hi - lo).max(1.0);
        Some(Self {
            bars,
            pool,
            lo: (lo - pad).floor(),
            hi: (hi + pad).ceil(),
        })
    }

    /// The y value of the `i`-th analyst: analysts from the top down, in file order.
    fn row(&self, i: usize) -> f64 {
        (self.bars.len() - 1 - i) as f64
    }
}

/// A chart with a numeric x and y axis.
type XyChart<'a, 'b> = TimeChart<'a, 'b>;

/// The scores chart's axes: log score across, one row per analyst, the x axis titled.
fn score_axes<'a, 'b>(
    body: &'a DrawingArea<BitMapBackend<'b>, Shift>,
    words: &mut Words,
    scores: &ScoreBars,
) -> Result<XyChart<'a, 'b>, RenderError> {
    let names_w = scores
        .bars
        .iter()
        .map(|b| words.width(&b.0, TEXT_PX))
        .fold(0.0_f32, f32::max) as u32;
    let n = scores.bars.len();
    let mut chart = ChartBuilder::on(body)
        .margin_left(14)
        .margin_right(26)
        .margin_top(50)
        .x_label_area_size(62)
        .y_label_area_size(names_w + 24)
        .build_cartesian_2d(scores.lo..scores.hi, -0.5..(n as f64 - 0.5))
        .map_err(chart_error)?;
    chart
        .configure_mesh()
        .disable_y_mesh()
        .disable_y_axis()
        .light_line_style(WHITE.mix(0.0))
        .bold_line_style(GUIDE.mix(0.35))
        .x_label_formatter(&|v| format!("{v:.1}"))
        .label_style((FONT, TICK_PX))
        .draw()
        .map_err(chart_error)?;
    let (xs, ys) = chart.plotting_area().get_pixel_range();
    words.put(
        "log score = ln(density at the found position, per km²); higher is better, +0.69 = twice the density",
        ((xs.start + xs.end) / 2, ys.end + 34),
        AXIS_PX,
        INK,
        Across::Centre,
        Down::Top,
    );
    Ok(chart)
}

/// A bar's value label, set after the pool's line.
struct ValueLabel {
    /// The value as written.
    text: String,
    /// Anchor point, picture pixels.
    at: (i32, i32),
    /// Which side of the anchor the text stands.
    across: Across,
}

/// Each analyst's name and bar (or, for a zero density, a note in its place); returns the
/// bars' value labels, to be set later.
fn draw_score_bars(
    chart: &mut XyChart<'_, '_>,
    words: &mut Words,
    scores: &ScoreBars,
) -> Result<Vec<ValueLabel>, RenderError> {
    let (xs, _) = chart.plotting_area().get_pixel_range();
    let lo = scores.lo;
    let mut values = Vec::new();
    for (i, (name, s)) in scores.bars.iter().enumerate() {
        let row = scores.row(i);
        let (_, y) = chart.backend_coord(&(lo, row));
        words.put(
            name.clone(),
            (xs.start - 12, y),
            TEXT_PX,
            INK,
            Across::Right,
            Down::Middle,
        );
        if s.is_finite() {
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(0.0, row - 0.3), (*s, row + 0.3)],
                    DONE.mix(0.85).filled(),
                )))
                .map_err(chart_error)?;
            let (x, y) = chart.backend_coord(&(*s, row));
            let (across, dx) = if *s < 0.0 {
                (Across::Right, -8)
            } else {
                (Across::Left, 8)
            };
            values.push(ValueLabel {
                text: format!("{s:.2}"),
                at: (x + dx, y),
                across,
            });
        } else {
            let (x, y) = chart.backend_coord(&(lo, row));
            words.put(
                "zero density at the found position (log score −∞)",
                (x + 10, y),
                TEXT_PX,
                RGBColor(180, 30, 30),
                Across::Left,
                Down::Middle,
            );
        }
    }
    Ok(values)
}

/// The pool's score as a dashed line, broken where a zero-density note stands; returns the
/// legend's entries.
fn draw_pool_line(
    chart: &mut XyChart<'_, '_>,
    scores: &ScoreBars,
) -> Result<Vec<Entry>, RenderError> {
    let mut entries = vec![Entry {
        text: "each analyst's map".into(),
        colour: DONE,
        dashed: false,
    }];
    let p = scores.pool;
    if !p.is_finite() {
        entries.push(Entry {
            text: "the pooled map: zero density at the found position".into(),
            colour: OPTIMAL,
            dashed: true,
        });
        return Ok(entries);
    }
    for (i, (_, s)) in scores.bars.iter().enumerate() {
        if s.is_finite() {
            let row = scores.row(i);
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(p, row - 0.5), (p, row + 0.5)],
                    8,
                    5,
                    OPTIMAL.stroke_width(3),
                ))
                .map_err(chart_error)?;
        }
    }
    entries.push(Entry {
        text: format!("the pooled map: {p:.2}"),
        colour: OPTIMAL,
        dashed: true,
    });
    Ok(entries)
}

/// The bars' value labels, each on a white ground so the pool's line never runs through a
/// number.
fn put_value_labels(
    body: &DrawingArea<BitMapBackend<'_>, Shift>,
    words: &mut Words,
    values: Vec<ValueLabel>,
) -> Result<(), RenderError> {
    let base = body.get_base_pixel();
    for ValueLabel {
        text,
        at: (x, y),
        across,
    } in values
    {
        let w = words.width(&text, TEXT_PX).ceil() as i32;
        let x0 = match across {
            Across::Right => x - w,
            _ => x,
        };
        body.draw(&Rectangle::new(
            [
                (x0 - 4 - base.0, y - 11 - base.1),
                (x0 + w + 4 - base.0, y + 11 - base.1),
            ],
            WHITE.filled(),
        ))
        .map_err(chart_error)?;
        words.put(text, (x, y), TEXT_PX, INK, across, Down::Middle);
    }
    Ok(())
}

/// A "nice" ring spacing for distances up to `max_m` metres: 1, 2 or 5 times a power of ten.
fn ring_step(max_m: f64) -> f64 {
    let raw = (max_m / 4.0).max(1.0);
    let unit = 10f64.powf(raw.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .map(|m| m * unit)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * unit)
}

/// A distance in words: metres below 1 km, else km.
fn distance_text(m: f64) -> String {
    if m < 1000.0 {
        format!("{m:.0} m")
    } else {
        format!("{:.1} km", m / 1000.0)
    }
}

/// Categorical colours of the analysts (Tableau 10, as colorous ships it).
fn analyst_colour(i: usize) -> RGBColor {
    let c = colorous::TABLEAU10[i % colorous::TABLEAU10.len()];
    RGBColor(c.r, c.g, c.b)
}

/// `review-bias.png`: each analyst's bias on a compass (north up): a point at the bearing
/// and distance from the mean of their map to the found position, with a legend that names
/// each point; `None` without biases.
///
/// # Errors
/// As [`pos_chart`].
pub fn bias_chart(r: &Review) -> Result<Option<Vec<u8>>, RenderError> {
    let biases: Vec<(String, f64, Option<f64>)> = r
        .analysts
        .iter()
        .filter_map(|a| a.bias.map(|b| (a.id.clone(), b.distance_m, b.bearing_deg)))
        .collect();
    if biases.is_empty() {
        return Ok(None);
    }
    let max = biases.iter().map(|b| b.1).fold(0.0_f64, f64::max);
    let step = ring_step(max);
    let rings = ((max / step).ceil() as usize).max(1);
    let radius = rings as f64 * step;
    let extent = radius * 1.16;
    let height = 800;
    render(
        WIDTH,
        height,
        "Each analyst's bias: from the centre of their map to the found position",
        &r.title,
        |body, words| {
            let side = body.dim_in_pixel().1;
            let (plot, legend_area) = body.split_horizontally(side);
            let chart = ChartBuilder::on(&plot)
                .margin(26)
                .build_cartesian_2d(-extent..extent, -extent..extent)
                .map_err(chart_error)?;
            let mut chart = chart;
            let ring_style = GUIDE.stroke_width(1);
            for k in 1..=rings {
                let rr = k as f64 * step;
                let circle: Vec<(f64, f64)> = (0..=180)
                    .map(|j| {
                        let a = f64::from(j) * std::f64::consts::PI / 90.0;
                        (rr * a.sin(), rr * a.cos())
                    })
                    .collect();
                chart
                    .draw_series(std::iter::once(PathElement::new(circle, ring_style)))
                    .map_err(chart_error)?;
                // Ring labels along the 135° line, where no compass letter stands.
                let a = 135f64.to_radians();
                let (x, y) = chart.backend_coord(&(rr * a.sin(), rr * a.cos()));
                words.put(distance_text(rr), (x + 4, y + 2), 15.0, FAINT, Across::Left, Down::Top);
            }
            for (from, to) in [((0.0, -radius), (0.0, radius)), ((-radius, 0.0), (radius, 0.0))] {
                chart
                    .draw_series(std::iter::once(PathElement::new(vec![from, to], ring_style)))
                    .map_err(chart_error)?;
            }
            let edge = radius * 1.04;
            for (text, at, across, down) in [
                ("N", (0.0, edge), Across::Centre, Down::Bottom),
                ("S", (0.0, -edge), Across::Centre, Down::Top),
                ("E", (edge, 0.0), Across::Left, Down::Middle),
                ("W", (-edge, 0.0), Across::Right, Down::Middle),
            ] {
                let p = chart.backend_coord(&at);
                words.put(text, p, 22.0, INK, across, down);
            }
            chart
                .draw_series(std::iter::once(Circle::new((0.0, 0.0), 4, INK.filled())))
                .map_err(chart_error)?;
            for (i, (_, d, b)) in biases.iter().enumerate() {
                let a = b.unwrap_or(0.0).to_radians();
                let p = (d * a.sin(), d * a.cos());
                let colour = analyst_colour(i);
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(0.0, 0.0), p],
                        colour.stroke_width(3),
                    )))
                    .map_err(chart_error)?;
                chart
                    .draw_series(std::iter::once(Circle::new(p, 9, colour.filled())))
                    .map_err(chart_error)?;
                chart
                    .draw_series(std::iter::once(Circle::new(p, 9, WHITE.stroke_width(2))))
                    .map_err(chart_error)?;
            }
            // The legend: how to read the picture, then one entry per analyst.
            let (lx, ly) = legend_area.get_base_pixel();
            let (lw, _) = legend_area.dim_in_pixel();
            let mut y = ly + 30;
            let how = format!(
                "The centre is the mean of an analyst's map; each point is where the object was found, seen from there. North is up; rings every {}.",
                distance_text(step)
            );
            for line in words.wrap(&how, TEXT_PX, lw as f32 - 30.0) {
                words.put(line, (lx + 10, y), TEXT_PX, FAINT, Across::Left, Down::Top);
                y += 22;
            }
            y += 20;
            for (i, (name, d, b)) in biases.iter().enumerate() {
                let base = legend_area.get_base_pixel();
                legend_area
                    .draw(&Circle::new((18, y + 10 - base.1), 9, analyst_colour(i).filled()))
                    .map_err(chart_error)?;
                words.put(shorten(name, 28), (lx + 36, y), 18.0, INK, Across::Left, Down::Top);
                let bearing = b.map_or("no bearing (distance 0)".to_owned(), |b| {
                    format!("toward {b:03.0}° true")
                });
                words.put(
                    format!("{}, {bearing}", distance_text(*d)),
                    (lx + 36, y + 24),
                    TEXT_PX,
                    FAINT,
                    Across::Left,
                    Down::Top,
                );
                y += 60;
            }
            Ok(())
        },
    )
    .map(Some)
}

/// Every chart a review has data for, in the order of [`CHART_FILES`].
///
/// # Errors
/// As [`pos_chart`].
pub fn review_charts(r: &Review) -> Result<Vec<Chart>, RenderError> {
    let mut charts = vec![Chart {
        name: CHART_FILES[0],
        png: pos_chart(r)?,
    }];
    for (name, png) in [
        (CHART_FILES[1], rank_chart(r)?),
        (CHART_FILES[2], scores_chart(r)?),
        (CHART_FILES[3], bias_chart(r)?),
    ] {
        if let Some(png) = png {
            charts.push(Chart { name, png });
        }
    }
    Ok(charts)
}

/// Writes the review's charts into `dir`, each tagged with the run id in a `tEXt` chunk, and
/// returns the names written.
///
/// # Errors
/// As [`pos_chart`] and [`OutputDir::write`].
pub fn write_review_charts(r: &Review, dir: &OutputDir) -> Result<Vec<&'static str>, RenderError> {
    let charts = review_charts(r)?;
    for c in &charts {
        dir.write(c.name, &with_text_chunk(&c.png, "run_id", dir.run_id())?)?;
    }
    Ok(charts.iter().map(|c| c.name).collect())
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use geo::Coord;
    use seekgrid_core::rank::TruthRank;
    use seekgrid_core::{DEFAULT_MAX_CELLS, Frame, GridSpec, UtmZone};
    use seekgrid_engine::review::{
        AnalystScore, Bias, Effort, OptimalPeriod, Outcome, Period, PoolScore, ReviewEnd,
        TimelineRow, Truth, TruthAt,
    };

    fn at(h: i64) -> Time {
        "2026-06-14T18:00:00Z".parse::<Time>().unwrap() + chrono::Duration::minutes(h * 30)
    }

    fn rank(mass_above: f64) -> TruthRank {
        TruthRank {
            mass_above,
            area_above_km2: 10.0 * mass_above,
            cells_above: 4,
            mass_equal: 0.01,
            area_equal_km2: 0.25,
            cells_equal: 1,
        }
    }

    fn analyst(id: &str, score: f64, bias: Option<(f64, f64)>) -> AnalystScore {
        AnalystScore {
            id: id.into(),
            weight_used: 1.0 / 3.0,
            density_per_km2: Some(score.exp()),
            log_score: Some(score),
            pool_scored_higher: Some(true),
            bias: bias.map(|(d, b)| Bias {
                mean_xy: Coord { x: 0.0, y: 0.0 },
                mean_lon_lat: [-40.9, 31.5],
                distance_m: d,
                bearing_deg: Some(b),
            }),
            implied_weight: Some(0.3),
        }
    }

    /// An invented review: three analysts, two periods with their optimum, found at 4 h.
    pub(crate) fn invented_review() -> Review {
        let frame = Frame::new(UtmZone::from_epsg(32626).unwrap());
        let grid = GridSpec::new(400_000.0, 3_500_000.0, 250.0, 40, 40, DEFAULT_MAX_CELLS).unwrap();
        let pos = [0.0, 0.0, 0.12, 0.12, 0.31, 0.31, 0.36, 0.36, 0.36];
        let timeline = (0..9)
            .map(|k| TimelineRow {
                time: at(k),
                hours_since_reference: k as f64 / 2.0,
                whole_hour: k % 2 == 0,
                searches_ended: Vec::new(),
                searches_applied: k as usize / 2,
                pos_cumulative: pos[k as usize],
                effort: Effort::default(),
                effort_by_unit: Vec::new(),
                effort_by_period: Vec::new(),
                truth: Some(TruthAt {
                    poc: 0.01,
                    density_per_km2: 0.05,
                    rank: rank(0.55 - 0.05 * k as f64),
                }),
            })
            .collect();
        let period = |start: i64, end: i64, cum: f64| Period {
            id: format!("p{start}"),
            tasked: false,
            start: at(start),
            end: at(end),
            searches: vec!["s".into()],
            units: vec!["u".into()],
            effort: Effort::default(),
            all_exponential: true,
            overlaps_other_period: false,
            pos: 0.2,
            pos_cumulative: 0.3,
            pod_at_truth: Some(0.1),
            optimal: Some(OptimalPeriod {
                pos_same_belief: 0.3,
                pod_at_truth_same_belief: Some(0.2),
                pos_chain: 0.3,
                pos_cumulative_chain: cum,
                pod_at_truth_chain: Some(0.2),
            }),
        };
        Review {
            title: "INVENTED: dinghy overdue off Wrenhold harbour".into(),
            reference_time: at(0),
            end: at(8),
            end_reason: ReviewEnd::Found,
            outcome: Some(Outcome::Found {
                position: [-40.9, 31.55],
                time: at(8),
                position_error_m: None,
                note: None,
            }),
            truth: Some(Truth {
                lon_lat: [-40.9, 31.55],
                xy: Coord {
                    x: 405_000.0,
                    y: 3_495_000.0,
                },
                time: at(8),
                position_error_m: None,
                cell: Some((20, 20)),
            }),
            frame,
            grid,
            searches: Vec::new(),
            units: Vec::new(),
            periods: vec![period(1, 3, 0.21), period(3, 5, 0.47)],
            timeline,
            pos_cumulative: 0.36,
            pod_at_truth_cumulative: Some(0.1),
            pool: Some(PoolScore {
                density_per_km2: 0.06,
                log_score: 0.06f64.ln(),
                analysts_beaten: 2,
                analysts: 3,
            }),
            analysts: vec![
                analyst("harbour-desk", -2.4, Some((2300.0, 48.0))),
                analyst("ops-desk", -3.9, Some((4100.0, 75.0))),
                analyst("duty-officer", f64::NEG_INFINITY, Some((6200.0, 210.0))),
            ],
            scenarios: Vec::new(),
            not_computed: Vec::new(),
        }
    }

    fn decode(png: &[u8]) -> image::RgbImage {
        image::load_from_memory_with_format(png, image::ImageFormat::Png)
            .unwrap()
            .to_rgb8()
    }

    /// Share of pixels that are not white.
    fn inked(img: &image::RgbImage) -> f64 {
        let n = img.pixels().filter(|p| p.0 != [255, 255, 255]).count();
        n as f64 / f64::from(img.width() * img.height())
    }

    #[test]
    fn every_chart_of_a_review_is_a_png_with_ink_and_its_series_colours() {
        let charts = review_charts(&invented_review()).unwrap();
        let names: Vec<&str> = charts.iter().map(|c| c.name).collect();
        assert_eq!(names, CHART_FILES);
        for c in &charts {
            let img = decode(&c.png);
            assert_eq!(img.width(), WIDTH, "{}", c.name);
            let ink = inked(&img);
            assert!(ink > 0.01 && ink < 0.5, "{}: {ink}", c.name);
        }
        // The POS chart holds the series colours of both lines.
        let pos = decode(&charts[0].png);
        for colour in [DONE, OPTIMAL] {
            assert!(
                pos.pixels().any(|p| p.0 == [colour.0, colour.1, colour.2]),
                "{colour:?}"
            );
        }
    }

    #[test]
    fn a_review_without_a_found_position_has_only_the_pos_chart() {
        let mut r = invented_review();
        r.truth = None;
        r.pool = None;
        r.outcome = None;
        for row in &mut r.timeline {
            row.truth = None;
        }
        for a in &mut r.analysts {
            a.log_score = None;
            a.bias = None;
        }
        let charts = review_charts(&r).unwrap();
        assert_eq!(charts.len(), 1);
        assert_eq!(charts[0].name, "review-pos.png");
    }

    #[test]
    fn ring_steps_are_one_two_or_five_times_a_power_of_ten() {
        // Computed: a quarter of the largest distance rounded up to 1, 2 or 5 x 10^k.
        assert_eq!(ring_step(6200.0), 2000.0);
        assert_eq!(ring_step(3900.0), 1000.0);
        assert_eq!(ring_step(180.0), 50.0);
    }

    #[test]
    fn wrapped_lines_fit_their_width_and_keep_every_word() {
        let words = Words::new().unwrap();
        let text = format!("CAUTION: {CAUTION}");
        let lines = words.wrap(&text, 15.0, 400.0);
        assert!(lines.len() >= 3, "{lines:?}");
        for l in &lines {
            assert!(words.width(l, 15.0) <= 400.0, "{l}");
        }
        assert_eq!(lines.join(" "), text);
    }
}
