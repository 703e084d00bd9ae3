//! Escaping text for HTML and inline SVG: names come from plan files and may hold `<` or `&`.

/// Escapes `&`, `<`, `>`, `"` and `'` so text is safe both as element content and inside a
/// quoted attribute (HTML Living Standard, "escaping a string"; `'` as `&#39;`).
pub(crate) fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn markup_characters_are_escaped() {
        // Hand: each of the five characters becomes its entity, others pass through.
        assert_eq!(
            esc(r#"Merrow <Sound> & "Skerrin" 'A'"#),
            "Merrow &lt;Sound&gt; &amp; &quot;Skerrin&quot; &#39;A&#39;"
        );
        assert_eq!(esc("ssp2-4.5 · 2050 km²"), "ssp2-4.5 · 2050 km²");
        // Already-escaped text is escaped again (no double-decoding surprises).
        assert_eq!(esc("&amp;"), "&amp;amp;");
    }
}
