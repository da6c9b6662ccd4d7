//! User alias files: a CSV that adds names for built-in entities and defines the user's own
//! entities under ISO 3166-1 user-assigned codes. Owns the file format, its checks and the
//! messages for each mistake; the index it writes into belongs to `Resolver` (mod.rs).
//!
//! Format (UTF-8, a BOM is allowed, lines starting with `#` are comments):
//! ```text
//! name,code,kind,currency,note
//! Nordic countries,XNC,aggregate,,hand-made group
//! Holland,NLD
//! ```
//! `name` and `code` are required. `kind` (country | aggregate | user) defaults to the kind
//! the code already has, else `user`. `currency` is an ISO 4217 code for countries and any
//! three-letter unit label otherwise. `note` is free text and ignored.
//!
//! A file is loaded whole or not at all, so a mistake on line 40 leaves no half-applied
//! aliases behind.

use std::path::Path;

use super::{is_user_assigned_alpha3, normalize, Entity, EntityKind, Origin, Resolver};
use crate::error::{Error, Location, Result};

const COLUMNS: [&str; 5] = ["name", "code", "kind", "currency", "note"];
const EXPECTED_HEADER: &str =
    "a header with columns name,code and optionally kind, currency and note";

impl Resolver {
    /// Loads a UTF-8 alias file; returns how many new names it added.
    pub fn add_alias_file(&mut self, path: &Path) -> Result<usize> {
        let label = path.display().to_string();
        let bytes = crate::source::read_file(path)?;
        let text = match String::from_utf8(bytes) {
            Ok(text) => text,
            Err(e) => {
                let valid = &e.as_bytes()[..e.utf8_error().valid_up_to()];
                let line = 1 + valid.iter().filter(|&&b| b == b'\n').count();
                return Err(Error::bad_input(
                    Location::line(label, line),
                    "bytes that are not UTF-8 text",
                    "an alias file saved as UTF-8",
                    "save the file as \"CSV UTF-8\" (spreadsheet programs) or convert it with iconv",
                ));
            }
        };
        self.add_alias_text(&text, &label)
    }

    /// Same as [`Resolver::add_alias_file`] for text already in memory; `file_label` names
    /// the text in messages.
    pub fn add_alias_text(&mut self, text: &str, file_label: &str) -> Result<usize> {
        let mut staged = self.clone();
        let added = load(
            &mut staged,
            text.strip_prefix('\u{feff}').unwrap_or(text),
            file_label,
        )?;
        *self = staged;
        Ok(added)
    }
}

/// Column positions found in the header.
struct Columns {
    name: usize,
    code: usize,
    kind: Option<usize>,
    currency: Option<usize>,
}

fn load(r: &mut Resolver, text: &str, file: &str) -> Result<usize> {
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .comment(Some(b'#'))
        .from_reader(text.as_bytes());
    let columns = read_header(&mut reader, file)?;
    let mut added = 0;
    for record in reader.records() {
        let record = record.map_err(|e| csv_error(e, file))?;
        let line = record.position().map_or(0, |p| p.line() as usize);
        let field = |i: Option<usize>| i.and_then(|i| record.get(i)).unwrap_or("");
        let row = Row {
            file,
            line,
            name: field(Some(columns.name)),
            code: field(Some(columns.code)),
            kind: field(columns.kind),
            currency: field(columns.currency),
        };
        added += row.apply(r)?;
    }
    Ok(added)
}

fn read_header(reader: &mut csv::Reader<&[u8]>, file: &str) -> Result<Columns> {
    let header = reader.headers().map_err(|e| csv_error(e, file))?.clone();
    let line = header.position().map_or(1, |p| p.line() as usize);
    let names: Vec<String> = header.iter().map(|h| h.to_ascii_lowercase()).collect();
    for (i, h) in names.iter().enumerate() {
        if !COLUMNS.contains(&h.as_str()) {
            return Err(Error::bad_input(
                Location::line(file, line),
                format!("unknown column \"{}\"", &header[i]),
                EXPECTED_HEADER,
                "rename or remove the column (free text belongs in a `note` column)",
            ));
        }
        if names[..i].contains(h) {
            return Err(Error::bad_input(
                Location::line(file, line),
                format!("column \"{h}\" appears twice"),
                EXPECTED_HEADER,
                "keep one of the two columns",
            ));
        }
    }
    let find = |c: &str| names.iter().position(|h| h == c);
    match (find("name"), find("code")) {
        (Some(name), Some(code)) => Ok(Columns {
            name,
            code,
            kind: find("kind"),
            currency: find("currency"),
        }),
        _ => Err(Error::bad_input(
            Location::line(file, line),
            format!("header \"{}\"", header.iter().collect::<Vec<_>>().join(",")),
            EXPECTED_HEADER,
            "make the first line of the alias file `name,code`",
        )),
    }
}

fn csv_error(e: csv::Error, file: &str) -> Error {
    let line = e.position().map_or(0, |p| p.line() as usize);
    let location = if line > 0 {
        Location::line(file, line)
    } else {
        Location::file(file)
    };
    let fix = match e.kind() {
        csv::ErrorKind::UnequalLengths { .. } => {
            "put names that contain commas in double quotes, e.g. \"Korea, Rep.\",KOR"
        }
        _ => "fix the CSV syntax on that line",
    };
    Error::bad_input(
        location,
        e.to_string(),
        "a CSV row with the same columns as the header",
        fix,
    )
}

struct Row<'a> {
    file: &'a str,
    line: usize,
    name: &'a str,
    code: &'a str,
    kind: &'a str,
    currency: &'a str,
}

impl Row<'_> {
    fn error(
        &self,
        column: &str,
        found: impl Into<String>,
        expected: &str,
        fix: impl Into<String>,
    ) -> Error {
        Error::bad_input(
            Location::cell(self.file, self.line, column),
            found,
            expected,
            fix,
        )
    }

    /// Applies one row; returns 1 when it added a name the index did not have.
    fn apply(&self, r: &mut Resolver) -> Result<usize> {
        if self.name.is_empty() {
            return Err(self.error(
                "name",
                "an empty name",
                "the entity name as it appears in your tables",
                "fill in the name or delete the row",
            ));
        }
        let key = normalize(self.name);
        if key.is_empty() {
            return Err(self.error(
                "name",
                format!("\"{}\" has no letters or digits", self.name),
                "the entity name as it appears in your tables",
                "fill in the name or delete the row",
            ));
        }
        let kind = self.kind()?;
        let idx = self.target(r, kind)?;
        self.set_currency(r, idx)?;

        // A name that reads as a code is looked up as that code first, so it must not
        // point anywhere else or the alias would silently never apply.
        if let Some(other) = r.code_index(self.name) {
            if other != idx {
                return Err(self.error(
                    "name",
                    format!(
                        "\"{}\" is the code of {}, not of {}",
                        self.name,
                        r.entities[other].label(),
                        r.entities[idx].code
                    ),
                    "a name that is not already a code of another entity",
                    "remove the row: the code already resolves",
                ));
            }
        }
        if let Some(entry) = r.names.get(&key) {
            if let Some((other, origin)) = entry.targets.iter().find(|(i, _)| *i != idx) {
                return Err(self.clash(&r.entities[*other], origin, &r.entities[idx].code));
            }
        }
        let origin = Origin::User {
            file: self.file.to_string(),
            line: self.line,
        };
        Ok(usize::from(r.insert_name(key, idx, origin)))
    }

    fn kind(&self) -> Result<Option<EntityKind>> {
        Ok(Some(match self.kind.to_ascii_lowercase().as_str() {
            "" => return Ok(None),
            "country" => EntityKind::Country,
            "aggregate" => EntityKind::Aggregate,
            "user" => EntityKind::User,
            _ => {
                return Err(self.error(
                    "kind",
                    format!("\"{}\"", self.kind),
                    "country, aggregate, user, or empty",
                    "use one of the three kinds, or leave the cell empty",
                ))
            }
        }))
    }

    /// The entity this row's code names, created when the code is a new user-assigned one.
    fn target(&self, r: &mut Resolver, kind: Option<EntityKind>) -> Result<usize> {
        const EXPECTED: &str = "an ISO 3166-1 alpha-3 code (e.g. FRA), a World Bank aggregate \
             code (e.g. WLD), or a user-assigned code AAA-AAZ, QMA-QZZ, XAA-XZZ or ZZA-ZZZ";
        if self.code.is_empty() {
            return Err(self.error(
                "code",
                format!("an empty code for \"{}\"", self.name),
                EXPECTED,
                "fill in the code or delete the row",
            ));
        }
        let code = self.code.to_ascii_uppercase();
        if code.len() != 3 || !code.bytes().all(|b| b.is_ascii_uppercase()) {
            return Err(self.error(
                "code",
                format!("\"{}\" is not three letters", self.code),
                EXPECTED,
                "write the code as three letters, e.g. FRA or XAB",
            ));
        }
        if let Some(&idx) = r.codes.get(&code) {
            let existing = &r.entities[idx];
            if let Some(kind) = kind.filter(|k| *k != existing.kind) {
                return Err(self.error(
                    "kind",
                    format!(
                        "kind {} for {}, which is a {}",
                        kind.as_str(),
                        existing.label(),
                        existing.kind.as_str()
                    ),
                    "the kind the code already has, or an empty cell",
                    format!("write {} or leave the cell empty", existing.kind.as_str()),
                ));
            }
            return Ok(idx);
        }
        if !is_user_assigned_alpha3(&code) {
            return Err(self.error(
                "code",
                format!(
                    "\"{code}\" is neither an ISO 3166-1 alpha-3 code, a built-in aggregate code \
                     nor a user-assigned code"
                ),
                EXPECTED,
                "check the spelling, or give an entity of your own a code such as XAA",
            ));
        }
        Ok(r.add_entity(Entity {
            code,
            name: self.name.to_string(),
            kind: kind.unwrap_or(EntityKind::User),
            currency: None,
        }))
    }

    fn set_currency(&self, r: &mut Resolver, idx: usize) -> Result<()> {
        if self.currency.is_empty() {
            return Ok(());
        }
        let currency = self.currency.to_ascii_uppercase();
        let entity = &r.entities[idx];
        let country = entity.kind == EntityKind::Country;
        let valid = if country {
            Resolver::is_valid_currency_code(&currency)
        } else {
            currency.len() == 3 && currency.bytes().all(|b| b.is_ascii_uppercase())
        };
        if !valid {
            return Err(self.error(
                "currency",
                format!("\"{}\"", self.currency),
                if country {
                    "an ISO 4217 currency code such as EUR"
                } else {
                    "a three-letter currency or unit code"
                },
                "correct the code or leave the cell empty",
            ));
        }
        match &entity.currency {
            Some(have) if *have != currency => Err(self.error(
                "currency",
                format!(
                    "{currency} for {}, which already has currency {have}",
                    entity.label()
                ),
                "the currency the entity already has, or an empty cell",
                "leave the cell empty, or define a separate entity with a user-assigned code",
            )),
            _ => {
                r.entities[idx].currency = Some(currency);
                Ok(())
            }
        }
    }

    fn clash(&self, other: &Entity, origin: &Origin, code: &str) -> Error {
        let (found, fix) = match origin {
            Origin::Builtin => (
                format!(
                    "\"{}\" (for {code}) already means {}",
                    self.name,
                    other.label()
                ),
                "drop the row, or write the name differently if it really is another entity"
                    .to_string(),
            ),
            Origin::User { file, line } => {
                let place = if file == self.file {
                    format!("line {line}")
                } else {
                    format!("{file}, line {line}")
                };
                (
                    format!(
                        "\"{}\" is mapped to {code} on line {}, but {place} maps it to {}",
                        self.name, self.line, other.code
                    ),
                    format!("keep only one of line {} and {place}", self.line),
                )
            }
        };
        self.error("name", found, "each name mapped to one code only", fix)
    }
}

#[cfg(test)]
mod tests {
    use super::super::{iso_codes_json, Resolution};
    use super::*;

    fn found(r: &Resolver, text: &str) -> Entity {
        match r.resolve(text) {
            Resolution::Found(e) => e.clone(),
            other => panic!("{text:?}: {other:?}"),
        }
    }

    fn load_err(text: &str) -> String {
        let mut r = Resolver::builtin();
        match r.add_alias_text(text, "aliases.csv") {
            Ok(n) => panic!("expected an error, {n} names were added"),
            Err(e) => e.to_string(),
        }
    }

    #[test]
    fn user_code_defines_a_user_entity() {
        let mut r = Resolver::builtin();
        let text = "name,code,currency\nNordic block,XAB,NOK\nNordics,XAB,\n";
        assert_eq!(r.add_alias_text(text, "aliases.csv").unwrap(), 2);
        let e = found(&r, "nordics");
        assert_eq!(
            (e.code.as_str(), e.kind, e.name.as_str()),
            ("XAB", EntityKind::User, "Nordic block")
        );
        assert_eq!(e.currency.as_deref(), Some("NOK"));
        assert_eq!(found(&r, "xab").code, "XAB");
        assert_eq!(r.by_code("XAB").unwrap().name, "Nordic block");
    }

    #[test]
    fn user_assigned_code_qqq_is_accepted_and_kind_is_kept() {
        // QMA-QZZ is a user-assigned range of ISO 3166-1 (from memory).
        let mut r = Resolver::builtin();
        r.add_alias_text("name,code,kind\nMy Group,QQQ,aggregate\n", "a.csv")
            .unwrap();
        assert_eq!(found(&r, "My Group").kind, EntityKind::Aggregate);
    }

    #[test]
    fn codes_outside_iso_and_the_user_ranges_are_errors() {
        // "BAD" must be unassigned in ISO 3166-1 for this test to mean anything: check it.
        let iso: Vec<String> = iso_codes_json("iso_3166-1.json", "3166-1")
            .into_iter()
            .map(|e| e["alpha_3"].clone())
            .collect();
        assert!(!iso.contains(&"BAD".to_string()));
        let text = load_err("name,code\nBadland,BAD\n");
        assert!(
            text.starts_with("aliases.csv, line 2, column \"code\""),
            "{text}"
        );
        assert!(text.contains("\"BAD\" is neither"), "{text}");
        let text = load_err("name,code\nBadland,ZZ1\n");
        assert!(text.contains("\"ZZ1\" is not three letters"), "{text}");
    }

    #[test]
    fn clash_within_a_file_names_both_codes_and_lines() {
        let text = load_err("name,code\nTestland,XAB\nOther,XAC\nTESTLAND,XAC\n");
        // "TESTLAND" and "Testland" differ only in case: same key.
        assert!(text.contains("line 4"), "{text}");
        assert!(
            text.contains("XAC on line 4, but line 2 maps it to XAB"),
            "{text}"
        );
    }

    #[test]
    fn clash_with_a_builtin_name_says_what_it_already_means() {
        // "Ivory Coast" is the English name of Côte d'Ivoire (common practice).
        let text = load_err("name,code\nIvory Coast,GHA\n");
        assert!(text.contains("already means Côte d'Ivoire (CIV)"), "{text}");
        assert!(text.contains("GHA"), "{text}");
        let text = load_err("name,code\nFR,DEU\n");
        assert!(text.contains("is the code of France (FRA)"), "{text}");
    }

    #[test]
    fn clash_across_files_names_the_first_file() {
        let mut r = Resolver::builtin();
        r.add_alias_text("name,code\nTestland,XAB\n", "first.csv")
            .unwrap();
        let err = r
            .add_alias_text("name,code\nTestland,XAC\n", "second.csv")
            .unwrap_err();
        assert!(
            err.to_string()
                .contains("but first.csv, line 2 maps it to XAB"),
            "{err}"
        );
    }

    #[test]
    fn empty_cells_and_bad_headers_are_errors() {
        assert!(load_err("name,code\n,XAB\n").contains("column \"name\": an empty name"));
        assert!(load_err("name,code\nTestland,\n").contains("column \"code\": an empty code"));
        assert!(load_err("country,iso\nTestland,XAB\n").contains("unknown column \"country\""));
        assert!(load_err("name\nTestland\n").contains("header \"name\""));
        assert!(load_err("name,code\nKorea, Rep.,KOR\n").contains("double quotes"));
        assert!(load_err("name,code,kind\nTestland,XAB,region\n").contains("\"region\""));
    }

    #[test]
    fn a_failed_file_leaves_the_resolver_unchanged() {
        let mut r = Resolver::builtin();
        assert!(r
            .add_alias_text("name,code\nTestland,XAB\nBadland,BAD\n", "a.csv")
            .is_err());
        assert!(matches!(
            r.resolve("Testland"),
            Resolution::Unresolved { .. }
        ));
        assert!(r.by_code("XAB").is_none());
    }

    #[test]
    fn extra_names_for_iso_countries_and_bom_and_comments() {
        let mut r = Resolver::builtin();
        let text = "\u{feff}# names from our survey\nName,Code,Kind\nRépublique française,fra,country\nFrance,FRA,\n";
        // Only the first row adds a name: "France" is already the ISO 3166-1 name.
        assert_eq!(r.add_alias_text(text, "a.csv").unwrap(), 1);
        let e = found(&r, "Republique Francaise");
        assert_eq!((e.code.as_str(), e.kind), ("FRA", EntityKind::Country));
    }

    #[test]
    fn kind_and_currency_must_agree_with_what_the_code_already_is() {
        assert!(
            load_err("name,code,kind\nLa France,FRA,aggregate\n").contains("which is a country")
        );
        assert!(load_err("name,code,kind\nLa France,FRA,user\n").contains("which is a country"));
        // France's currency is the euro (ISO 4217, from memory).
        assert!(load_err("name,code,currency\nLa France,FRA,USD\n")
            .contains("already has currency EUR"));
        // Country currencies must be ISO 4217; "ABC" is not (checked in mod.rs tests).
        assert!(
            load_err("name,code,kind,currency\nTestland,XAB,country,ABC\n").contains("ISO 4217")
        );
        assert!(load_err("name,code,currency\nTestland,XAB,EURO\n").contains("\"EURO\""));
        let mut r = Resolver::builtin();
        r.add_alias_text("name,code,currency\nPoints,XAB,pts\n", "a.csv")
            .unwrap();
        assert_eq!(found(&r, "points").currency.as_deref(), Some("PTS"));
    }

    #[test]
    fn alias_files_are_read_from_disk() {
        let dir = std::env::temp_dir().join(format!("entity-alias-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let good = dir.join("good.csv");
        std::fs::write(&good, "name,code\nTestland,XAB\n").unwrap();
        let bad = dir.join("latin1.csv");
        std::fs::write(&bad, b"name,code\nTestland,XAB\nR\xe9union,REU\n").unwrap();
        let mut r = Resolver::builtin();
        assert_eq!(r.add_alias_file(&good).unwrap(), 1);
        let err = r.add_alias_file(&bad).unwrap_err().to_string();
        assert!(err.contains("line 3") && err.contains("not UTF-8"), "{err}");
        let err = r
            .add_alias_file(&dir.join("missing.csv"))
            .unwrap_err()
            .to_string();
        assert!(err.contains("cannot read"), "{err}");
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
