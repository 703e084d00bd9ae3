//! A plain SVG line chart: axes with round ticks, labelled, one line (with point markers) per
//! series in a colour-blind-safe hue, an optional dashed reference line, and a legend.

use super::escape::esc;
use super::feature_map::value_label;
use super::frame::{nice_floor, round1};
use super::palette::OKABE_ITO;
use std::fmt::Write;

/// Plot area and margins. Units: SVG units.
const PLOT_W: f64 = 440.0;
const PLOT_H: f64 = 220.0;
const LEFT: f64 = 64.0;
const TOP: f64 = 28.0;
const BOTTOM: f64 = 46.0;
const LEGEND_W: f64 = 190.0;
const LEGEND_ROW: f64 = 16.0;

/// One line of a chart.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Series {
    /// Legend label.
    pub label: String,
    /// `(x, y)` points in drawing order; non-finite points are skipped.
    pub points: Vec<(f64, f64)>,
}

/// What a chart shows.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Chart<'a> {
    /// Heading drawn above the plot.
    pub title: &'a str,
    /// Label under the x axis (with units).
    pub x_label: &'a str,
    /// Label beside the y axis (with units).
    pub y_label: &'a str,
    /// Lines, coloured in Okabe–Ito order (cycling, with dashes after the first eight).
    pub series: &'a [Series],
    /// Fixed y range, or `None` to fit the data (from 0 when all y ≥ 0).
    pub y_range: Option<(f64, f64)>,
    /// A dashed horizontal line and its label (e.g. the target).
    pub reference: Option<(f64, &'a str)>,
    /// x ticks to use (e.g. the scenario's years), or `None` for round ticks.
    pub x_ticks: Option<Vec<f64>>,
}

/// Round ticks covering `lo..=hi` with at most about `max_n` intervals: steps of 1, 2 or
/// 5 × 10ᵏ, from the largest multiple of the step ≤ lo to the smallest ≥ hi.
pub(crate) fn nice_ticks(lo: f64, hi: f64, max_n: usize) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite()) || max_n == 0 {
        return vec![];
    }
    if hi <= lo {
        return vec![lo];
    }
    let raw = (hi - lo) / max_n as f64;
    let mut step = nice_floor(raw);
    if step < raw * (1.0 - 1e-9) {
        // The next 1-2-5 step up: the floor is below the raw step.
        let p = 10f64.powf(step.log10().floor());
        let m = (step / p).round();
        step = if m < 2.0 {
            2.0 * p
        } else if m < 5.0 {
            5.0 * p
        } else {
            10.0 * p
        };
    }
    // The 1e-9 keeps a bound that is a multiple of the step from adding one more tick.
    let first = (lo / step + 1e-9).floor();
    let last = (hi / step - 1e-9).ceil();
    (first as i64..=last as i64)
        .map(|k| {
            let v = k as f64 * step;
            // Snap k·step to the decimal the step implies, so 0.1·3 prints as 0.3.
            let digits = (-step.log10().floor()).max(0.0) as i32;
            let f = 10f64.powi(digits);
            (v * f).round() / f
        })
        .collect()
}

/// Renders the chart as inline SVG.
pub(crate) fn line_chart(c: &Chart) -> String {
    let pts = || {
        c.series
            .iter()
            .flat_map(|s| s.points.iter())
            .filter(|p| p.0.is_finite() && p.1.is_finite())
    };
    let (mut x0, mut x1) = pts().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
        (a.min(p.0), b.max(p.0))
    });
    if let Some(t) = &c.x_ticks {
        for &v in t {
            x0 = x0.min(v);
            x1 = x1.max(v);
        }
    }
    if !(x0.is_finite() && x1.is_finite()) {
        (x0, x1) = (0.0, 1.0);
    }
    let x_ticks = c.x_ticks.clone().unwrap_or_else(|| nice_ticks(x0, x1, 6));
    if c.x_ticks.is_none() {
        if let (Some(&a), Some(&b)) = (x_ticks.first(), x_ticks.last()) {
            (x0, x1) = (a, b);
        }
    }
    if x1 <= x0 {
        // One x value: centre it.
        (x0, x1) = (x0 - 1.0, x1 + 1.0);
    }
    let (y0, y1) = match c.y_range {
        Some(r) => r,
        None => {
            let (a, b) = pts().fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
                (a.min(p.1), b.max(p.1))
            });
            let a = if a.is_finite() { a.min(0.0) } else { 0.0 };
            let b = if b.is_finite() { b } else { 1.0 };
            let t = nice_ticks(a, if b > a { b } else { a + 1.0 }, 5);
            (t[0], *t.last().unwrap_or(&1.0))
        }
    };
    let y_ticks: Vec<f64> = nice_ticks(y0, y1, 5)
        .into_iter()
        .filter(|&v| v >= y0 - 1e-9 && v <= y1 + 1e-9)
        .collect();
    let px = |x: f64| LEFT + (x - x0) / (x1 - x0) * PLOT_W;
    let py = |y: f64| TOP + PLOT_H - (y.clamp(y0, y1) - y0) / (y1 - y0) * PLOT_H;
    let w = LEFT + PLOT_W + 16.0 + LEGEND_W;
    let legend_h = TOP + LEGEND_ROW * c.series.len() as f64;
    let h = (TOP + PLOT_H + BOTTOM).max(legend_h + 8.0);
    let mut s = String::new();
    let _ = write!(
        s,
        r#"<svg class="chart" viewBox="0 0 {w} {h}" width="{w}" height="{h}" role="img" aria-label="{t}" font-size="11">"#,
        w = round1(w),
        h = round1(h),
        t = esc(c.title)
    );
    let _ = write!(
        s,
        r#"<text x="{LEFT}" y="16" font-size="13" font-weight="bold">{}</text>"#,
        esc(c.title)
    );
    // Grid lines and tick labels.
    for &v in &y_ticks {
        let y = round1(py(v));
        let _ = write!(
            s,
            r##"<line x1="{LEFT}" x2="{x2}" y1="{y}" y2="{y}" stroke="#e0e0e0"/><text x="{tx}" y="{ty}" text-anchor="end">{l}</text>"##,
            x2 = LEFT + PLOT_W,
            tx = LEFT - 6.0,
            ty = round1(y + 4.0),
            l = esc(&value_label(v))
        );
    }
    for &v in &x_ticks {
        if v < x0 - 1e-9 || v > x1 + 1e-9 {
            continue;
        }
        let x = round1(px(v));
        let _ = write!(
            s,
            r##"<line x1="{x}" x2="{x}" y1="{yb}" y2="{yt}" stroke="#1a1a1a"/><text x="{x}" y="{ty}" text-anchor="middle">{l}</text>"##,
            yb = TOP + PLOT_H,
            yt = TOP + PLOT_H + 4.0,
            ty = TOP + PLOT_H + 16.0,
            l = esc(&value_label(v))
        );
    }
    // Axes.
    let _ = write!(
        s,
        r##"<path d="M{LEFT} {TOP}V{yb}H{xr}" fill="none" stroke="#1a1a1a"/>"##,
        yb = TOP + PLOT_H,
        xr = LEFT + PLOT_W
    );
    let _ = write!(
        s,
        r#"<text x="{x}" y="{y}" text-anchor="middle">{l}</text>"#,
        x = LEFT + PLOT_W / 2.0,
        y = TOP + PLOT_H + 34.0,
        l = esc(c.x_label)
    );
    let _ = write!(
        s,
        r#"<text transform="translate(14 {y}) rotate(-90)" text-anchor="middle">{l}</text>"#,
        y = TOP + PLOT_H / 2.0,
        l = esc(c.y_label)
    );
    if let Some((v, label)) = c.reference {
        if v >= y0 && v <= y1 {
            let y = round1(py(v));
            let _ = write!(
                s,
                r##"<line class="reference" x1="{LEFT}" x2="{x2}" y1="{y}" y2="{y}" stroke="#1a1a1a" stroke-dasharray="5 3"/><text x="{tx}" y="{ty}" text-anchor="end">{l}</text>"##,
                x2 = LEFT + PLOT_W,
                tx = LEFT + PLOT_W - 2.0,
                ty = round1(y - 4.0),
                l = esc(label)
            );
        }
    }
    for (k, series) in c.series.iter().enumerate() {
        let colour = OKABE_ITO[k % OKABE_ITO.len()];
        let dash = if k >= OKABE_ITO.len() {
            r#" stroke-dasharray="2 2""#
        } else {
            ""
        };
        let mut d = String::new();
        let mut marks = String::new();
        for &(x, y) in series
            .points
            .iter()
            .filter(|p| p.0.is_finite() && p.1.is_finite())
        {
            let (u, v) = (round1(px(x)), round1(py(y)));
            d.push(if d.is_empty() { 'M' } else { 'L' });
            let _ = write!(d, "{u} {v}");
            let _ = write!(
                marks,
                r#"<circle cx="{u}" cy="{v}" r="2.5" fill="{colour}"/>"#
            );
        }
        let _ = write!(
            s,
            r#"<g class="series" data-series="{k}"><path d="{d}" fill="none" stroke="{colour}" stroke-width="2"{dash}/>{marks}</g>"#
        );
        let ly = TOP + LEGEND_ROW * k as f64;
        let lx = LEFT + PLOT_W + 16.0;
        let _ = write!(
            s,
            r#"<line x1="{lx}" x2="{lx2}" y1="{y}" y2="{y}" stroke="{colour}" stroke-width="2"{dash}/><text x="{tx}" y="{ty}">{l}</text>"#,
            lx2 = lx + 18.0,
            y = round1(ly + 6.0),
            tx = lx + 24.0,
            ty = round1(ly + 10.0),
            l = esc(&series.label)
        );
    }
    s.push_str("</svg>");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round() {
        // Hand: 0..2 in ≤ 5 steps → raw 0.4 → step 0.5.
        assert_eq!(nice_ticks(0.0, 2.0, 5), vec![0.0, 0.5, 1.0, 1.5, 2.0]);
        // 2030..2090 in ≤ 6 → raw 10 → step 10, from 2030 to 2090.
        assert_eq!(nice_ticks(2030.0, 2090.0, 6).len(), 7);
        // 0.03..0.97 in ≤ 5 → raw 0.188 → step 0.2, from 0 to 1.
        assert_eq!(
            nice_ticks(0.03, 0.97, 5),
            vec![0.0, 0.2, 0.4, 0.6, 0.8, 1.0]
        );
        assert_eq!(nice_ticks(3.0, 3.0, 5), vec![3.0]);
        assert!(nice_ticks(f64::NAN, 1.0, 5).is_empty());
    }

    #[test]
    fn points_land_where_the_axes_say() {
        let series = vec![Series {
            label: "cod <north>".into(),
            points: vec![(2030.0, 0.0), (2090.0, 2.0), (2060.0, 5.0)],
        }];
        let svg = line_chart(&Chart {
            title: "t",
            x_label: "year",
            y_label: "protected ÷ target",
            series: &series,
            y_range: Some((0.0, 2.0)),
            reference: Some((1.0, "target")),
            x_ticks: Some(vec![2030.0, 2060.0, 2090.0]),
        });
        // Hand: x 2030 → LEFT = 64, 2090 → 64 + 440 = 504, 2060 → 284; y 0 → TOP + PLOT_H
        // = 248, y 2 → 28; y 5 is capped at 2 → 28. Reference y 1 → 138.
        assert!(svg.contains(r#"<path d="M64 248L504 28L284 28""#), "{svg}");
        assert!(svg.contains(r#"class="reference" x1="64" x2="504" y1="138""#));
        assert!(svg.contains("cod &lt;north&gt;"));
    }
}
