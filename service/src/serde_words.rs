//! serde's messages about a wrong JSON type, in words a caller understands.
//!
//! serde names Rust types (`invalid type: string "12", expected f64`); a caller of an HTTP API
//! thinks in JSON (`must be a number, not the text "12"`). The field's path is said beside the
//! message, so the message only says what the field takes and what it got.

/// What a Rust type of the contract takes, in JSON words.
fn expected_words(rust: &str) -> Option<&'static str> {
    Some(match rust {
        "f64" | "f32" => "a number",
        "u8" | "u16" | "u32" | "u64" | "usize" => "a whole number (0 or more)",
        "i8" | "i16" | "i32" | "i64" | "isize" => "a whole number",
        "a boolean" | "bool" => "true or false",
        "a string" | "a borrowed string" | "char" => "text (a JSON string)",
        "a sequence" => "a list (a JSON array)",
        "a map" => "an object",
        _ if rust.starts_with("struct ") || rust.starts_with("a map") => "an object",
        _ => return None,
    })
}

/// What a JSON value serde found is, in words (`string "12"` -> `the text "12"`).
fn found_words(found: &str) -> String {
    let unquote = |s: &str| s.trim_matches('`').to_string();
    if let Some(text) = found.strip_prefix("string ") {
        format!("the text {text}")
    } else if let Some(n) = found
        .strip_prefix("floating point ")
        .or_else(|| found.strip_prefix("integer "))
    {
        unquote(n)
    } else if let Some(b) = found.strip_prefix("boolean ") {
        unquote(b)
    } else {
        match found {
            "map" => "an object".to_string(),
            "sequence" => "a list".to_string(),
            "null" | "unit value" => "null".to_string(),
            other => other.to_string(),
        }
    }
}

/// serde's message `message`, reworded where it names a Rust type; other messages (missing
/// or unknown fields, unknown names with the allowed ones listed) are already in words and
/// are returned as they are.
pub fn reword(message: &str) -> String {
    let parsed = message
        .strip_prefix("invalid type: ")
        .or_else(|| message.strip_prefix("invalid value: "))
        .and_then(|rest| rest.rsplit_once(", expected "));
    if let Some((found, expected)) = parsed
        && let Some(words) = expected_words(expected)
    {
        let found = found_words(found);
        // A whole-number field given a fraction or a negative number: say the range too.
        let range = match expected {
            "u32" => " from 0 to 4294967295",
            "u64" | "usize" => " from 0 to 18446744073709551615",
            _ => "",
        };
        let words = if range.is_empty() {
            words.to_string()
        } else {
            format!("a whole number{range}")
        };
        return format!("must be {words}, not {found}");
    }
    // Elsewhere a Rust type may trail a message (`expected f64`).
    let mut text = message.to_string();
    for rust in ["f64", "f32", "u32", "u64", "usize", "i64", "i32"] {
        if let Some(words) = expected_words(rust) {
            text = text.replace(&format!("expected {rust}"), &format!("expected {words}"));
        }
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rust_type_names_become_json_words() {
        assert_eq!(
            reword(r#"invalid type: string "12", expected f64"#),
            r#"must be a number, not the text "12""#
        );
        assert_eq!(
            reword("invalid type: floating point `2.5`, expected u32"),
            "must be a whole number from 0 to 4294967295, not 2.5"
        );
        assert_eq!(
            reword("invalid value: integer `-1`, expected u32"),
            "must be a whole number from 0 to 4294967295, not -1"
        );
        assert_eq!(
            reword("invalid type: map, expected f64"),
            "must be a number, not an object"
        );
        assert_eq!(
            reword("invalid type: null, expected struct DesignSpec"),
            "must be an object, not null"
        );
        assert_eq!(
            reword("invalid type: integer `3`, expected a sequence"),
            "must be a list (a JSON array), not 3"
        );
        assert_eq!(
            reword("unknown field `colour`, expected one of `a`, `b`"),
            "unknown field `colour`, expected one of `a`, `b`"
        );
    }
}
