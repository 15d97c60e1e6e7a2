//! The embedded font and text measured with it, so that titles and legends
//! are laid out for the width they really take.

use skrifa::MetadataProvider;
use skrifa::instance::{LocationRef, Size};

/// The embedded font: Liberation Sans Regular 2.1.5 (SIL Open Font License
/// 1.1, licence text in `assets/fonts/LICENSE-LiberationSans.txt`).
pub(crate) const FONT_DATA: &[u8] = include_bytes!("../../assets/fonts/LiberationSans-Regular.ttf");

/// Family name of the embedded font, as the font itself declares it.
pub(crate) const FONT_FAMILY: &str = "Liberation Sans";

/// Width of `text` set in the embedded font at `size_px` (the SVG
/// `font-size`), px: the sum of the glyphs' advance widths, no kerning.
/// Characters the font lacks count half an em.
pub fn text_width(text: &str, size_px: f64) -> f64 {
    let Ok(font) = skrifa::FontRef::new(FONT_DATA) else {
        return 0.6 * size_px * text.chars().count() as f64;
    };
    let charmap = font.charmap();
    let metrics = font.glyph_metrics(Size::new(size_px as f32), LocationRef::default());
    text.chars()
        .map(|c| {
            charmap
                .map(c)
                .and_then(|g| metrics.advance_width(g))
                .map_or(0.5 * size_px, f64::from)
        })
        .sum()
}

/// Height of a line of the embedded font at `size_px`: ascent plus descent, px.
pub(crate) fn line_height(size_px: f64) -> f64 {
    match skrifa::FontRef::new(FONT_DATA) {
        Ok(font) => {
            let m = font.metrics(Size::new(size_px as f32), LocationRef::default());
            f64::from(m.ascent - m.descent)
        }
        Err(_) => 1.15 * size_px,
    }
}

/// Splits `text` into at most `max_lines` lines no wider than `width` px at
/// `size_px`, breaking after ", ", "; ", ": " or " — " where it can and at
/// spaces otherwise. What does not fit in the last line is cut and ends in
/// "…". Empty text gives no line.
pub fn wrap_text(text: &str, size_px: f64, width: f64, max_lines: usize) -> Vec<String> {
    let text = text.trim();
    if text.is_empty() || max_lines == 0 {
        return Vec::new();
    }
    let fits = |s: &str| text_width(s, size_px) <= width;
    let mut lines = Vec::new();
    let mut rest = text.to_string();
    while !rest.is_empty() {
        if fits(&rest) {
            lines.push(std::mem::take(&mut rest));
            break;
        }
        if lines.len() + 1 == max_lines {
            lines.push(shorten(&rest, size_px, width));
            break;
        }
        // Longest prefix ending at a break that fits; clause breaks first.
        let breaks = |separators: &[&str]| {
            let mut best = None;
            for (i, _) in rest.char_indices() {
                for sep in separators {
                    if rest[i..].starts_with(sep) {
                        let head = rest[..i + sep.len()].trim_end();
                        if fits(head) {
                            best = Some(i + sep.len());
                        }
                    }
                }
            }
            best
        };
        let cut = breaks(&[", ", "; ", ": ", " \u{2014} "]).or_else(|| breaks(&[" "]));
        match cut {
            Some(at) => {
                lines.push(rest[..at].trim_end().to_string());
                rest = rest[at..].trim_start().to_string();
            }
            None => {
                lines.push(shorten(&rest, size_px, width));
                break;
            }
        }
    }
    lines
}

/// `text` cut to fit `width` px at `size_px`, ending in "…" when cut.
pub fn shorten(text: &str, size_px: f64, width: f64) -> String {
    if text_width(text, size_px) <= width {
        return text.to_string();
    }
    let chars: Vec<char> = text.chars().collect();
    let mut n = chars.len();
    while n > 0 {
        let head: String = chars[..n].iter().collect();
        let candidate = format!("{}\u{2026}", head.trim_end());
        if text_width(&candidate, size_px) <= width {
            return candidate;
        }
        n -= 1;
    }
    "\u{2026}".to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_is_measured_with_the_font() {
        // Liberation Sans has the advance widths of its metric-compatible
        // peers: "i" is much narrower than "W" (common practice of
        // proportional faces).
        let narrow = text_width("iiii", 20.0);
        let wide = text_width("WWWW", 20.0);
        assert!(narrow > 0.0 && wide > 2.5 * narrow, "{narrow} {wide}");
        // Width scales with the size.
        assert!((text_width("yaw rate", 30.0) - 1.5 * text_width("yaw rate", 20.0)).abs() < 0.1);
    }

    #[test]
    fn wrap_breaks_at_clauses_and_shortens() {
        let text = "step_steer.rhai: hybrid crossover (invented demo), 100 km/h, 2 deg/s";
        let width = text_width(text, 20.0);
        assert_eq!(
            wrap_text(text, 20.0, width + 1.0, 2),
            vec![text.to_string()]
        );
        let lines = wrap_text(text, 20.0, 0.6 * width, 2);
        assert_eq!(lines.len(), 2);
        assert!(lines.iter().all(|l| text_width(l, 20.0) <= 0.6 * width));
        assert!(
            lines[0].ends_with(',') || lines[0].ends_with(':'),
            "{lines:?}"
        );
        let short = wrap_text(text, 20.0, 0.3 * width, 2);
        assert!(short[1].ends_with('\u{2026}'), "{short:?}");
        assert!(wrap_text("", 20.0, 100.0, 2).is_empty());
    }
}
