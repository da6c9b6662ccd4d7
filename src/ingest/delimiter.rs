//! Which delimiter a text table uses, found by the lines it splits alike, and its name in
//! messages.

const CANDIDATES: &[u8] = b",\t;|";
/// Picks the delimiter that splits the most lines into the same number of fields, preferring
/// the one that splits them most. Quoted text is skipped. Title lines above the header do not
/// decide: every line of the first twenty votes.
pub fn sniff_delimiter(text: &str) -> u8 {
    let lines: Vec<&str> = text
        .lines()
        .filter(|l| !l.trim().is_empty())
        .take(40)
        .collect();
    if lines.is_empty() {
        return b',';
    }
    let mut best = (b',', 0usize, 0usize);
    for &candidate in CANDIDATES {
        let counts: Vec<usize> = lines
            .iter()
            .map(|l| count_outside_quotes(l, candidate))
            .collect();
        // The most common non-zero count is this delimiter's table width.
        let mut tally: std::collections::BTreeMap<usize, usize> = Default::default();
        for &c in counts.iter().filter(|&&c| c > 0) {
            *tally.entry(c).or_default() += 1;
        }
        let Some((&width, &agreeing)) = tally.iter().max_by_key(|(w, n)| (**n, **w)) else {
            continue;
        };
        if (agreeing, width) > (best.1, best.2) {
            best = (candidate, agreeing, width);
        }
    }
    best.0
}

fn count_outside_quotes(line: &str, delimiter: u8) -> usize {
    let mut quoted = false;
    let mut count = 0;
    for b in line.bytes() {
        if b == b'"' {
            quoted = !quoted;
        } else if b == delimiter && !quoted {
            count += 1;
        }
    }
    count
}

pub fn delimiter_name(delimiter: u8) -> &'static str {
    match delimiter {
        b',' => "comma",
        b'\t' => "tab",
        b';' => "semicolon",
        b'|' => "pipe",
        _ => "custom",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sniffs_common_delimiters() {
        assert_eq!(sniff_delimiter("a,b,c\n1,2,3\n"), b',');
        assert_eq!(sniff_delimiter("a\tb\tc\n1,5\t2\t3\n"), b'\t');
        assert_eq!(sniff_delimiter("country;2019;2020\nFrance;1,5;2,5\n"), b';');
        assert_eq!(sniff_delimiter("\"a,x\"|b\n1|2\n"), b'|');
        // A title with commas above a semicolon table does not decide.
        assert_eq!(
            sniff_delimiter("Fees, invented, 2020\ncountry;fee\nA;1\nB;2\n"),
            b';'
        );
    }
}
