//! The SVG report: a header, the calibration chart (standards, fitted line,
//! 95 % prediction band) and the residual chart (residuals against
//! concentration with a zero line). Each chart is drawn by plotters' SVG
//! backend into its own string and placed in a group of the report with an
//! id (`calibration-chart`, `residual-chart`), so tools and tests can find
//! them.
//!
//! Palette and markers are this project's own: ochre band, deep-teal line,
//! wine crosses for standards, indigo triangles for residuals, on a warm
//! paper background.

use crate::scenario::Scenario;
use crate::{band, DemoError};
use plotters::prelude::*;
use plumbfit::LineFit;

const PAPER: RGBColor = RGBColor(251, 248, 241);
const INK: RGBColor = RGBColor(46, 42, 36);
const BAND: RGBColor = RGBColor(233, 184, 114);
const LINE: RGBColor = RGBColor(31, 111, 120);
const POINT: RGBColor = RGBColor(140, 47, 57);
const RESID: RGBColor = RGBColor(76, 91, 140);
const GRID_LIGHT: RGBColor = RGBColor(237, 230, 216);
const GRID_BOLD: RGBColor = RGBColor(216, 204, 184);

const WIDTH: u32 = 960;
const HEADER: u32 = 96;
const CAL_H: u32 = 470;
const RES_H: u32 = 300;
const FOOTER: u32 = 84;

fn chart_err<E: std::fmt::Debug>(e: E) -> DemoError {
    DemoError::Chart(format!("{e:?}"))
}

/// The inner `<svg …>…</svg>` of a plotters drawing (without any XML
/// declaration, so it can be nested).
fn inner(svg: &str) -> &str {
    match svg.find("<svg") {
        Some(i) => &svg[i..],
        None => svg,
    }
}

fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

fn calibration_chart(sc: &Scenario, fit: &LineFit) -> Result<String, DemoError> {
    let mut buf = String::new();
    let xmax = sc.standards.iter().map(|r| r.conc).fold(0.0, f64::max) * 1.05;
    let ymax = sc.standards.iter().map(|r| r.signal).fold(0.0, f64::max) * 1.08;
    {
        let root = SVGBackend::with_string(&mut buf, (WIDTH, CAL_H)).into_drawing_area();
        root.fill(&PAPER).map_err(chart_err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                "Calibration: analyser signal against reference CO",
                ("sans-serif", 20).into_font().color(&INK),
            )
            .margin(16)
            .x_label_area_size(46)
            .y_label_area_size(66)
            .build_cartesian_2d(-5.0..xmax, -5.0..ymax)
            .map_err(chart_err)?;
        chart
            .configure_mesh()
            .light_line_style(GRID_LIGHT)
            .bold_line_style(GRID_BOLD)
            .axis_style(INK)
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .x_desc("reference CO, umol/mol")
            .y_desc("signal, mV")
            .draw()
            .map_err(chart_err)?;
        // Prediction band as one closed polygon: upper edge left to right,
        // lower edge back.
        let steps = 120;
        let xs: Vec<f64> = (0..=steps)
            .map(|i| xmax * i as f64 / steps as f64)
            .collect();
        let mut upper = Vec::new();
        let mut lower = Vec::new();
        for &x in &xs {
            let (lo, hi) = band(fit, x)?;
            upper.push((x, hi));
            lower.push((x, lo));
        }
        let mut poly = upper.clone();
        poly.extend(lower.iter().rev());
        chart
            .draw_series(std::iter::once(Polygon::new(poly, BAND.mix(0.35).filled())))
            .map_err(chart_err)?
            .label("95 % prediction band, one reading")
            .legend(|(x, y)| Rectangle::new([(x, y - 5), (x + 18, y + 5)], BAND.mix(0.5).filled()));
        chart
            .draw_series(LineSeries::new(
                xs.iter().map(|&x| (x, fit.fitted(x))),
                LINE.stroke_width(2),
            ))
            .map_err(chart_err)?
            .label("fitted line")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], LINE.stroke_width(2)));
        chart
            .draw_series(
                sc.standards
                    .iter()
                    .map(|r| Cross::new((r.conc, r.signal), 5, POINT.stroke_width(2))),
            )
            .map_err(chart_err)?
            .label("reference gas readings")
            .legend(|(x, y)| Cross::new((x + 9, y), 5, POINT.stroke_width(2)));
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(PAPER.mix(0.9))
            .border_style(GRID_BOLD)
            .label_font(("sans-serif", 13).into_font().color(&INK))
            .draw()
            .map_err(chart_err)?;
        root.present().map_err(chart_err)?;
    }
    Ok(buf)
}

fn residual_chart(fit: &LineFit, resid: &[(f64, f64)], xmax: f64) -> Result<String, DemoError> {
    let mut buf = String::new();
    // Half-widths of the prediction band about the line, drawn about zero
    // so the residuals can be read against the band.
    let steps = 120;
    let mut half = Vec::new();
    for i in 0..=steps {
        let x = xmax * i as f64 / steps as f64;
        let (_, hi) = band(fit, x)?;
        half.push((x, hi - fit.fitted(x)));
    }
    let hmax = half.iter().map(|(_, h)| *h).fold(0.0, f64::max);
    let rmax = resid.iter().map(|(_, e)| e.abs()).fold(hmax, f64::max) * 1.15;
    {
        let root = SVGBackend::with_string(&mut buf, (WIDTH, RES_H)).into_drawing_area();
        root.fill(&PAPER).map_err(chart_err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(
                "Residuals: reading minus fitted line (band: 95 % prediction half-width)",
                ("sans-serif", 20).into_font().color(&INK),
            )
            .margin(16)
            .x_label_area_size(46)
            .y_label_area_size(66)
            .build_cartesian_2d(-5.0..xmax, -rmax..rmax)
            .map_err(chart_err)?;
        chart
            .configure_mesh()
            .light_line_style(GRID_LIGHT)
            .bold_line_style(GRID_BOLD)
            .axis_style(INK)
            .label_style(("sans-serif", 13).into_font().color(&INK))
            .x_desc("reference CO, umol/mol")
            .y_desc("residual, mV")
            .draw()
            .map_err(chart_err)?;
        let mut poly: Vec<(f64, f64)> = half.clone();
        poly.extend(half.iter().rev().map(|&(x, h)| (x, -h)));
        chart
            .draw_series(std::iter::once(Polygon::new(poly, BAND.mix(0.30).filled())))
            .map_err(chart_err)?;
        chart
            .draw_series(LineSeries::new(
                vec![(-5.0, 0.0), (xmax, 0.0)],
                INK.mix(0.7).stroke_width(1),
            ))
            .map_err(chart_err)?;
        chart
            .draw_series(
                resid
                    .iter()
                    .map(|&(x, e)| TriangleMarker::new((x, e), 5, RESID.filled())),
            )
            .map_err(chart_err)?;
        root.present().map_err(chart_err)?;
    }
    Ok(buf)
}

/// The complete report as one SVG document.
///
/// # Errors
/// [`DemoError::Chart`] if drawing fails; the band's interval errors.
pub fn report_svg(sc: &Scenario, fit: &LineFit, resid: &[(f64, f64)]) -> Result<String, DemoError> {
    let xmax = sc.standards.iter().map(|r| r.conc).fold(0.0, f64::max) * 1.05;
    let cal = calibration_chart(sc, fit)?;
    let res = residual_chart(fit, resid, xmax)?;
    let height = HEADER + CAL_H + RES_H + FOOTER;
    let mut s = String::new();
    s.push_str(&format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{WIDTH}\" height=\"{height}\" \
         viewBox=\"0 0 {WIDTH} {height}\">\n"
    ));
    s.push_str(&format!(
        "<rect x=\"0\" y=\"0\" width=\"{WIDTH}\" height=\"{height}\" fill=\"#FBF8F1\"/>\n"
    ));
    s.push_str("<g id=\"report-header\" font-family=\"sans-serif\" fill=\"#2E2A24\">\n");
    s.push_str(
        "<text x=\"24\" y=\"36\" font-size=\"24\">plumbfit demo: calibration report</text>\n",
    );
    s.push_str(&format!(
        "<text x=\"24\" y=\"62\" font-size=\"14\">{}</text>\n",
        escape(&format!(
            "INVENTED DATA: a fictional CO analyser, {} readings at {} standards; \
             slope {:.5} mV per umol/mol, residual sd {:.3} mV",
            sc.standards.len(),
            crate::scenario::STANDARDS.len(),
            fit.slope,
            fit.residual_sd
        ))
    ));
    s.push_str(
        "<text x=\"24\" y=\"82\" font-size=\"12\">No real instrument, person or company \
         is described.</text>\n",
    );
    s.push_str("</g>\n");
    s.push_str(&format!(
        "<g id=\"calibration-chart\" transform=\"translate(0,{HEADER})\">\n{}\n</g>\n",
        inner(&cal)
    ));
    s.push_str(&format!(
        "<g id=\"residual-chart\" transform=\"translate(0,{})\">\n{}\n</g>\n",
        HEADER + CAL_H,
        inner(&res)
    ));
    let y0 = HEADER + CAL_H + RES_H;
    s.push_str(&format!(
        "<g id=\"report-caution\" font-family=\"sans-serif\" font-size=\"13\" fill=\"#8C2F39\">\n\
         <text x=\"24\" y=\"{}\">Caution: plumbfit computes; it does not approve. Acceptance of this \
         calibration belongs to your quality system,</text>\n\
         <text x=\"24\" y=\"{}\">local codes and licensed practice, above all where a result \
         protects people (gas detection, clinical analysis).</text>\n</g>\n",
        y0 + 30,
        y0 + 50
    ));
    s.push_str("</svg>\n");
    Ok(s)
}
