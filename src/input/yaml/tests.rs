//! The positioned YAML tree against RFC 6901 pointers, spans, the YAML
//! 1.2 core schema and the input budgets.

use super::parse::SMALL_MAP;
use super::*;

fn p(t: &str) -> Result<Node, YamlError> {
    parse(t, YamlLimits::default())
}

/// The example document and pointers of RFC 6901, section 5, plus
/// `~01` (a key `~1`: `~1` is undone before `~0`, RFC 6901 section 4).
#[test]
fn json_pointers_follow_rfc_6901() {
    let t = r#"{"foo": ["bar", "baz"], "": 0, "a/b": 1, "c%d": 2, "e^f": 3, "g|h": 4, 'i\j': 5, 'k"l': 6, " ": 7, "m~n": 8, "~1": 9}"#;
    let n = p(t).unwrap();
    let num = |ptr: &str| match n.pointer(ptr).map(|x| &x.value) {
        Some(Value::Number(v)) => Some(*v),
        _ => None,
    };
    assert_eq!(n.pointer("").unwrap().span, n.span);
    assert_eq!(n.pointer("/foo/0").unwrap().as_str(), Some("bar"));
    for (ptr, want) in [
        ("/", 0.0),
        ("/a~1b", 1.0),
        ("/c%d", 2.0),
        ("/e^f", 3.0),
        ("/g|h", 4.0),
        ("/i\\j", 5.0),
        ("/k\"l", 6.0),
        ("/ ", 7.0),
        ("/m~0n", 8.0),
        ("/~01", 9.0),
    ] {
        assert_eq!(num(ptr), Some(want), "{ptr}");
    }
    assert_eq!(num("/a/b"), None);
    // The key's own span, found through an escaped token.
    let key = n.key_span("/a~1b").unwrap();
    assert_eq!(&t[key], "\"a/b\"");
}

#[test]
fn spans_point_at_values() {
    let t = "a:\n  b: 4 mil\n  c: [1, 2]\n";
    let n = p(t).unwrap();
    let b = n.pointer("/a/b").unwrap();
    assert_eq!(&t[b.span.clone()], "4 mil");
    let c1 = n.pointer("/a/c/1").unwrap();
    assert_eq!(&t[c1.span.clone()], "2");
    assert_eq!(&t[n.key_span("/a/b").unwrap()], "b");
}

#[test]
fn quoted_spans_include_quotes() {
    let t = "a: \"4 mil\"\n";
    let n = p(t).unwrap();
    assert_eq!(&t[n.pointer("/a").unwrap().span.clone()], "\"4 mil\"");
    assert_eq!(n.pointer("/a").unwrap().as_str(), Some("4 mil"));
}

#[test]
fn non_ascii_spans_are_bytes() {
    let t = "a: \"µm\"\nb: 3 µm\n";
    let n = p(t).unwrap();
    assert_eq!(&t[n.pointer("/b").unwrap().span.clone()], "3 µm");
}

#[test]
fn core_schema_scalars() {
    let n = p("a: 3\nb: '3'\nc: true\nd: ~\ne: .nan\n").unwrap();
    assert_eq!(n.pointer("/a").unwrap().value, Value::Number(3.0));
    assert_eq!(n.pointer("/b").unwrap().value, Value::String("3".into()));
    assert_eq!(n.pointer("/c").unwrap().value, Value::Bool(true));
    assert_eq!(n.pointer("/d").unwrap().value, Value::Null);
    assert!(matches!(n.pointer("/e").unwrap().value, Value::Number(x) if x.is_nan()));
}

#[test]
fn alias_bomb_is_rejected() {
    let mut t = String::from("a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n");
    for i in 1..9 {
        t.push_str(&format!(
            "a{i}: &a{i} [*a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}]\n",
            p = i - 1
        ));
    }
    let e = p(&t).unwrap_err();
    assert!(e.message.contains("expands to more than"), "{}", e.message);
}

/// One 1 MiB string aliased 3,000 times would be 3 GB of text: refused
/// by the byte budget at the alias that crosses it, before any copy.
#[test]
fn aliased_long_string_is_rejected_by_bytes() {
    let mut t = format!("a: &big \"{}\"\nb: [", "x".repeat(1 << 20));
    for _ in 0..3000 {
        t.push_str("*big, ");
    }
    t.push_str("]\n");
    let started = std::time::Instant::now();
    let e = p(&t).unwrap_err();
    assert!(
        e.message.contains("more than 8388608 bytes"),
        "{}",
        e.message
    );
    assert_eq!(&t[e.span.clone()], "*big");
    // The anchored string counts once, the keys `a` and `b` one byte
    // each, so the seventh alias crosses 8 MiB by those two bytes.
    let seventh = t.match_indices("*big").nth(6).unwrap().0;
    assert_eq!(e.span.start, seventh);
    assert!(started.elapsed().as_secs() < 5);
}

#[test]
fn deep_nesting_is_rejected() {
    let t = format!("{}1{}", "[".repeat(100), "]".repeat(100));
    let e = p(&t).unwrap_err();
    assert!(e.message.contains("nests deeper"), "{}", e.message);
}

#[test]
fn duplicate_keys_are_rejected() {
    let t = "a: 1\na: 2\n";
    let e = p(t).unwrap_err();
    assert_eq!(&t[e.span.clone()], "a");
    assert_eq!(e.span.start, 5);
}

#[test]
fn tab_indentation_points_at_the_tab() {
    let t = "a:\n  b: 1\n\tc: 2\n";
    let e = p(t).unwrap_err();
    assert!(e.message.contains("tab"), "{}", e.message);
    assert_eq!(&t[e.span.clone()], "\t");
}

#[test]
fn unclosed_flow_list_points_at_its_bracket() {
    let t = "a:\n  b: [1, 2\n";
    let e = p(t).unwrap_err();
    assert!(e.message.contains("never closed"), "{}", e.message);
    assert_eq!(e.span.start, t.find('[').unwrap());
}

#[test]
fn duplicate_key_message_names_the_first_line() {
    let e = p("a: 1\nb: 2\na: 3\n").unwrap_err();
    assert!(e.message.contains("first at line 1"), "{}", e.message);
}

/// Duplicates are found alike below and above the size where the
/// search switches from a scan to a hash map, whichever key repeats.
#[test]
fn duplicate_keys_are_found_in_small_and_large_mappings() {
    for n in [1, 2, SMALL_MAP, SMALL_MAP + 1, SMALL_MAP + 2, 3 * SMALL_MAP] {
        let keys: String = (0..n).map(|i| format!("k{i}: {i}\n")).collect();
        let tree = p(&keys).unwrap();
        match &tree.value {
            Value::Map(entries) => {
                let names: Vec<&str> = entries.iter().map(|e| e.key.as_str()).collect();
                let want: Vec<String> = (0..n).map(|i| format!("k{i}")).collect();
                assert_eq!(names, want);
            }
            other => panic!("{other:?}"),
        }
        for j in [0, n / 2, n - 1] {
            let t = format!("{keys}k{j}: again\n");
            let e = p(&t).unwrap_err();
            assert!(
                e.message.contains(&format!("first at line {}", j + 1)),
                "{n} keys, k{j}: {}",
                e.message
            );
            assert_eq!(e.span.start, keys.len(), "{n} keys, k{j}");
        }
    }
}

#[test]
fn malformed_yaml_has_position() {
    let e = p("a: [1, 2\nb: 3\n").unwrap_err();
    assert!(e.message.contains("malformed") || e.message.contains("ends"));
}
