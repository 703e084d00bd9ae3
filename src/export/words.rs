//! Counts in words for every message and page: "1 cell", "3 cells", never "1 cells".

/// `n` and the noun, plural when `n` is not 1 (nouns whose plural adds `s`: cell, reserve,
/// network, target, feature, species stays `species`).
pub fn count(n: usize, noun: &str) -> String {
    if n == 1 || noun.ends_with("species") {
        format!("{n} {noun}")
    } else {
        format!("{n} {noun}s")
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn singular_and_plural_by_hand() {
        assert_eq!(super::count(1, "cell"), "1 cell");
        assert_eq!(super::count(0, "cell"), "0 cells");
        assert_eq!(super::count(13, "reserve"), "13 reserves");
        assert_eq!(super::count(2, "species"), "2 species");
    }
}
