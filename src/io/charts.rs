//! Charts as inline SVG for printable reports, drawn with the `plotters` crate's SVG backend (no system
//! fonts needed: text is written as `<text font-family="sans-serif">` and the reader's browser picks
//! the font), plus a plain SVG point map.

use plotters::prelude::*;

/// A horizontal bar chart: one bar per (label, value), the first at the top, labels on the left.
pub fn bar_chart(title: &str, bars: &[(String, f64)], unit: &str) -> Result<String, String> {
    // Plotters counts segments from the bottom; reverse so the list reads top-down.
    let bars: Vec<(String, f64)> = bars.iter().rev().cloned().collect();
    let bars = bars.as_slice();
    let height = 60 + 26 * bars.len().max(1) as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (720, height)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| e.to_string())?;
        let max = bars
            .iter()
            .map(|(_, v)| *v)
            .fold(0.0_f64, f64::max)
            .max(1e-9)
            * 1.08;
        let count = bars.len().max(1) as u32;
        let labels: Vec<String> = bars.iter().map(|(l, _)| l.clone()).collect();
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", 18))
            .margin(10)
            .x_label_area_size(28)
            .y_label_area_size(200)
            .build_cartesian_2d(0.0..max, (0u32..count).into_segmented())
            .map_err(|e| e.to_string())?;
        chart
            .configure_mesh()
            .disable_y_mesh()
            .light_line_style(WHITE)
            .bold_line_style(RGBColor(210, 210, 210))
            .x_desc(unit)
            .x_label_formatter(&|v| {
                crate::io::report_html::grouped(*v, if max < 10.0 { 1 } else { 0 })
            })
            .y_labels(count as usize)
            .y_label_formatter(&|v| match v {
                SegmentValue::CenterOf(i) => labels.get(*i as usize).cloned().unwrap_or_default(),
                _ => String::new(),
            })
            .draw()
            .map_err(|e| e.to_string())?;
        chart
            .draw_series(
                Histogram::horizontal(&chart)
                    .style(RGBColor(0, 114, 178).filled())
                    .margin(4)
                    .data(bars.iter().enumerate().map(|(i, (_, v))| (i as u32, *v))),
            )
            .map_err(|e| e.to_string())?;
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(svg)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bar_charts_are_well_formed_svg_with_their_labels() {
        let svg = bar_chart(
            "Trees by species",
            &[("Acer rubrum".into(), 12.0), ("Tilia cordata".into(), 30.5)],
            "trees",
        )
        .unwrap_or_default();
        assert!(svg.starts_with("<svg"), "{svg}");
        assert!(svg.contains("Acer rubrum") && svg.contains("Tilia cordata"));
        let mut reader = quick_xml::Reader::from_str(&svg);
        loop {
            match reader.read_event() {
                Ok(quick_xml::events::Event::Eof) => break,
                Ok(_) => {}
                Err(e) => panic!("not well-formed: {e}"),
            }
        }
    }
}
