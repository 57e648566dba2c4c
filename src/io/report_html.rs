//! The year summary as one self-contained, printable HTML file: inline CSS and SVG only (no network
//! fetches, no scripts), a print stylesheet with page breaks, and every piece of user text escaped.
//! The markup is XHTML-compatible (every element closed), so an XML parser reads it too.

use std::fmt::Write as _;

use crate::science::inventory::SummaryRow;

/// A table of the summary grouped one way.
#[derive(Debug, Clone)]
pub struct ReportTable {
    pub title: String,
    pub group_header: String,
    pub rows: Vec<SummaryRow>,
}

/// A tree on the report's map: position and class (an index into the legend).
#[derive(Debug, Clone, Copy)]
pub struct MapPoint {
    pub lon: f64,
    pub lat: f64,
    pub class: usize,
}

/// Everything the report shows; the caller computes it, this module only writes it.
#[derive(Debug, Clone)]
pub struct Report {
    pub title: String,
    pub inventory: String,
    pub year: i32,
    pub generated_on: String,
    pub basis: String,
    pub currency: String,
    pub total: SummaryRow,
    pub tables: Vec<ReportTable>,
    /// (rating, standing trees), highest first.
    pub risk: Vec<(String, i64)>,
    /// (priority, open orders, estimated cost).
    pub open_work: Vec<(i64, i64, f64)>,
    pub map_title: String,
    pub map_legend: Vec<String>,
    pub map: Vec<MapPoint>,
    /// (label, value) lines of the year's weather.
    pub weather: Vec<(String, String)>,
    /// (method, sources).
    pub methods: Vec<(String, String)>,
    pub cautions: Vec<String>,
}

/// Escapes text for HTML element content and attribute values.
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

/// A number with thousands separators and `decimals` decimals; never "-0", and "–" when not finite.
/// The one formatter of grouped numbers (reports, Markdown summaries and the TUI use it).
pub fn grouped(x: f64, decimals: usize) -> String {
    if !x.is_finite() {
        return "–".to_string();
    }
    let text = format!("{:.decimals$}", x.abs());
    let (whole, fraction) = match text.split_once('.') {
        Some((w, f)) => (w, Some(f)),
        None => (text.as_str(), None),
    };
    let mut out = String::new();
    for (i, c) in whole.chars().enumerate() {
        if i > 0 && (whole.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(c);
    }
    let negative = x < 0.0 && text.chars().any(|c| c.is_ascii_digit() && c != '0');
    let sign = if negative { "-" } else { "" };
    match fraction {
        Some(f) => format!("{sign}{out}.{f}"),
        None => format!("{sign}{out}"),
    }
}

const STYLE: &str = "
body { font-family: sans-serif; margin: 2em auto; max-width: 60em; color: #111; line-height: 1.4; }
h1 { font-size: 1.6em; margin-bottom: 0.2em; } h2 { font-size: 1.25em; margin-top: 1.6em; border-bottom: 1px solid #999; }
p.lead { color: #333; } .caution { border: 2px solid #111; padding: 0.6em 1em; margin: 1em 0; }
table { border-collapse: collapse; width: 100%; font-size: 0.85em; margin: 0.6em 0; }
th, td { border: 1px solid #bbb; padding: 0.25em 0.45em; } td.n { text-align: right; font-variant-numeric: tabular-nums; }
th { background: #eee; text-align: left; } tr.total td { font-weight: bold; border-top: 2px solid #111; }
.cards { display: flex; flex-wrap: wrap; gap: 0.8em; } .card { border: 1px solid #bbb; padding: 0.5em 0.8em; min-width: 12em; }
.card b { display: block; font-size: 1.3em; } figure { margin: 1em 0; } figcaption { font-size: 0.85em; color: #333; }
svg { max-width: 100%; height: auto; }
@media print {
  body { margin: 0; max-width: none; font-size: 10pt; }
  section { page-break-inside: avoid; }
  section.break { page-break-before: always; }
  figure, table { page-break-inside: avoid; }
}
";

/// Writes the whole report.
pub fn write_html(report: &Report, charts: &[(String, String)]) -> String {
    let mut h = String::new();
    let c = &report.currency;
    let _ = writeln!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\" /><title>{}</title><style>{STYLE}</style></head><body>",
        escape(&report.title)
    );
    let _ = writeln!(
        h,
        "<header><h1>{}</h1><p class=\"lead\">{} · generated {} · {}</p></header>",
        escape(&report.title),
        escape(&report.inventory),
        escape(&report.generated_on),
        escape(&report.basis)
    );
    let _ = writeln!(
        h,
        "<div class=\"caution\">{}</div>",
        report
            .cautions
            .iter()
            .map(|x| escape(x))
            .collect::<Vec<_>>()
            .join("<br />")
    );
    let t = &report.total;
    let _ = write!(
        h,
        "<section><h2>The year in numbers ({})</h2><div class=\"cards\">",
        report.year
    );
    for (label, value) in [
        ("Standing trees with benefits", grouped(t.trees as f64, 0)),
        (
            "Carbon stored",
            format!("{} t C", grouped(t.carbon_kg / 1000.0, 1)),
        ),
        (
            "CO2e stored",
            format!("{} t", grouped(t.co2e_kg / 1000.0, 1)),
        ),
        (
            "CO2e sequestered this year",
            format!("{} t", grouped(t.co2e_seq_kg_yr / 1000.0, 1)),
        ),
        (
            "Rain intercepted",
            format!("{} m³", grouped(t.interception_m3_yr, 0)),
        ),
        (
            "Water transpired",
            format!("{} m³", grouped(t.transpiration_m3_yr, 0)),
        ),
        (
            "Cooling (latent heat)",
            format!("{} MWh", grouped(t.cooling_kwh_yr / 1000.0, 0)),
        ),
        (
            "Value of the year's flows",
            format!("{} {}", grouped(t.value, 0), escape(c)),
        ),
        (
            "Crown projection",
            format!("{} m²", grouped(t.crown_projection_m2, 0)),
        ),
    ] {
        let _ = write!(
            h,
            "<div class=\"card\">{}<b>{}</b></div>",
            escape(label),
            value
        );
    }
    let _ = writeln!(
        h,
        "</div><p>{} of {} trees have an estimated input (height or crown width imputed from the inventory's own trees, or dieback assumed). Stored carbon is reported, not valued; cooling is a latent-heat equivalence, not metered savings.</p></section>",
        grouped(t.estimated_trees as f64, 0),
        grouped(t.trees as f64, 0)
    );
    for (i, (caption, svg)) in charts.iter().enumerate() {
        let class = if i == 0 { " class=\"break\"" } else { "" };
        let _ = writeln!(
            h,
            "<section{class}><figure>{svg}<figcaption>{}</figcaption></figure></section>",
            escape(caption)
        );
    }
    for table in &report.tables {
        write_table(&mut h, table, &report.total, c);
    }
    let _ = write!(h, "<section class=\"break\"><h2>Risk and open work</h2>");
    let _ = write!(
        h,
        "<table><tr><th>latest risk rating</th><th>standing trees</th></tr>"
    );
    for (rating, n) in &report.risk {
        let _ = write!(
            h,
            "<tr><td>{}</td><td class=\"n\">{}</td></tr>",
            escape(rating),
            grouped(*n as f64, 0)
        );
    }
    let _ = write!(
        h,
        "</table><table><tr><th>priority</th><th>open work orders</th><th>estimated cost ({})</th></tr>",
        escape(c)
    );
    for (priority, n, cost) in &report.open_work {
        let _ = write!(
            h,
            "<tr><td>{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td></tr>",
            priority,
            grouped(*n as f64, 0),
            grouped(*cost, 0)
        );
    }
    let _ = writeln!(
        h,
        "</table><p>{}</p></section>",
        escape(crate::care::risk::CAUTION)
    );
    let _ = writeln!(
        h,
        "<section class=\"break\"><h2>{}</h2>{}</section>",
        escape(&report.map_title),
        map_svg(report)
    );
    let _ = write!(h, "<section><h2>Weather of {}</h2><table>", report.year);
    for (label, value) in &report.weather {
        let _ = write!(
            h,
            "<tr><th>{}</th><td>{}</td></tr>",
            escape(label),
            escape(value)
        );
    }
    let _ = write!(
        h,
        "</table></section>\n<section class=\"break\"><h2>Methods and sources</h2><table>"
    );
    for (method, source) in &report.methods {
        let _ = write!(
            h,
            "<tr><th>{}</th><td>{}</td></tr>",
            escape(method),
            escape(source)
        );
    }
    let _ = writeln!(
        h,
        "</table><p>Flags: [published] printed in the named source; [from memory] recalled from it, not re-read; [common practice] a rule of the trade; [derived] our arithmetic on sourced values.</p></section>"
    );
    let _ = writeln!(
        h,
        "<footer><div class=\"caution\">{}</div></footer>\n</body></html>",
        report
            .cautions
            .iter()
            .map(|x| escape(x))
            .collect::<Vec<_>>()
            .join("<br />")
    );
    h
}

fn write_table(h: &mut String, table: &ReportTable, total: &SummaryRow, currency: &str) {
    let _ = write!(
        h,
        "<section><h2>{}</h2><table><tr><th>{}</th><th>trees</th><th>mean DBH cm</th><th>carbon stored t</th><th>CO2e sequestered t/yr</th><th>rain intercepted m³/yr</th><th>cooling MWh/yr</th><th>value {}/yr</th></tr>",
        escape(&table.title),
        escape(&table.group_header),
        escape(currency)
    );
    for row in table.rows.iter().chain(std::iter::once(total)) {
        let is_total = std::ptr::eq(row, total);
        let _ = write!(
            h,
            "<tr{}><td>{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td></tr>",
            if is_total { " class=\"total\"" } else { "" },
            if is_total {
                "total".to_string()
            } else {
                escape(&row.group)
            },
            grouped(row.trees as f64, 0),
            grouped(row.mean_dbh_cm, 1),
            grouped(row.carbon_kg / 1000.0, 2),
            grouped(row.co2e_seq_kg_yr / 1000.0, 2),
            grouped(row.interception_m3_yr, 1),
            grouped(row.cooling_kwh_yr / 1000.0, 1),
            grouped(row.value, 0)
        );
    }
    let _ = writeln!(h, "</table></section>");
}

/// Okabe & Ito's colour-blind-safe palette (2008); shapes differ too, so nothing relies on colour.
const COLOURS: [&str; 8] = [
    "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7", "#777777",
];

fn marker(class: usize, x: f64, y: f64, size: f64) -> String {
    let colour = COLOURS[class % COLOURS.len()];
    match class % 6 {
        0 => format!("<circle cx=\"{x:.1}\" cy=\"{y:.1}\" r=\"{size:.1}\" fill=\"{colour}\" />"),
        1 => format!(
            "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"{colour}\" />",
            x - size,
            y - size,
            2.0 * size,
            2.0 * size
        ),
        2 => format!(
            "<polygon points=\"{:.1},{:.1} {:.1},{:.1} {:.1},{:.1}\" fill=\"{colour}\" />",
            x,
            y - size * 1.2,
            x - size * 1.1,
            y + size,
            x + size * 1.1,
            y + size
        ),
        4 => format!(
            "<path d=\"M{:.1},{:.1} L{:.1},{:.1} M{:.1},{:.1} L{:.1},{:.1}\" stroke=\"{colour}\" stroke-width=\"{:.1}\" />",
            x - size,
            y - size,
            x + size,
            y + size,
            x - size,
            y + size,
            x + size,
            y - size,
            size * 0.7
        ),
        5 => format!(
            "<circle cx=\"{x:.1}\" cy=\"{y:.1}\" r=\"{size:.1}\" fill=\"none\" stroke=\"{colour}\" stroke-width=\"{:.1}\" />",
            size * 0.6
        ),
        _ => format!(
            "<polygon points=\"{:.1},{:.1} {:.1},{:.1} {:.1},{:.1} {:.1},{:.1}\" fill=\"{colour}\" />",
            x,
            y - size * 1.3,
            x + size * 1.3,
            y,
            x,
            y + size * 1.3,
            x - size * 1.3,
            y
        ),
    }
}

/// The trees as points (equirectangular about the centre: fine for a town), with a legend.
fn map_svg(report: &Report) -> String {
    let (width, height, legend_width) = (720.0, 520.0, 200.0);
    let map_width = width - legend_width;
    let mut svg = format!(
        "<svg width=\"{width}\" height=\"{height}\" viewBox=\"0 0 {width} {height}\"><rect width=\"{map_width}\" height=\"{height}\" fill=\"#ffffff\" stroke=\"#999999\" />"
    );
    if report.map.is_empty() {
        svg.push_str("<text x=\"20\" y=\"40\" font-family=\"sans-serif\">No tree has a position.</text></svg>");
        return svg;
    }
    let (mut min_lon, mut max_lon, mut min_lat, mut max_lat) =
        (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
    for p in &report.map {
        min_lon = min_lon.min(p.lon);
        max_lon = max_lon.max(p.lon);
        min_lat = min_lat.min(p.lat);
        max_lat = max_lat.max(p.lat);
    }
    let scale_x = ((min_lat + max_lat) / 2.0).to_radians().cos();
    let span_x = ((max_lon - min_lon) * scale_x).max(1e-9);
    let span_y = (max_lat - min_lat).max(1e-9);
    let scale = ((map_width - 20.0) / span_x).min((height - 20.0) / span_y);
    let mut counts = vec![0usize; report.map_legend.len().max(1)];
    // Worse classes are drawn last, on top, so a failing tree is never hidden under sound ones.
    let mut points: Vec<&MapPoint> = report.map.iter().collect();
    points.sort_by_key(|p| p.class);
    for p in points {
        let x = 10.0 + (p.lon - min_lon) * scale_x * scale;
        let y = height - 10.0 - (p.lat - min_lat) * scale;
        svg.push_str(&marker(p.class, x, y, 2.2));
        if let Some(c) = counts.get_mut(p.class) {
            *c += 1;
        }
    }
    for (i, label) in report.map_legend.iter().enumerate() {
        let y = 30.0 + i as f64 * 24.0;
        svg.push_str(&marker(i, map_width + 20.0, y - 4.0, 5.0));
        let _ = write!(
            svg,
            "<text x=\"{:.0}\" y=\"{y:.0}\" font-family=\"sans-serif\" font-size=\"13\">{} ({})</text>",
            map_width + 32.0,
            escape(label),
            counts.get(i).copied().unwrap_or(0)
        );
    }
    let metres = span_y * 111_320.0; // mean metres per degree of latitude (from memory)
    let _ = write!(
        svg,
        "<text x=\"{:.0}\" y=\"{:.0}\" font-family=\"sans-serif\" font-size=\"12\">map height ≈ {} m</text></svg>",
        map_width + 20.0,
        height - 20.0,
        grouped(metres, 0)
    );
    svg
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_user_text_and_groups_numbers() {
        assert_eq!(
            escape("<script>alert(1)</script> & 'x'"),
            "&lt;script&gt;alert(1)&lt;/script&gt; &amp; &#39;x&#39;"
        );
        assert_eq!(grouped(1234567.891, 2), "1,234,567.89");
        assert_eq!(grouped(999.0, 0), "999");
        assert_eq!(grouped(-1234.5, 1), "-1,234.5");
    }
}
