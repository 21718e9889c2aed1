//! Touchstone reader: the S parameters of a 1- to 64-port network from a
//! version 1.x file (option line and data; the port count comes from the
//! file name, `.sNp`) or a version 2.0 file (keywords), after the Touchstone
//! File Format Specification, Version 2.0 (IBIS Open Forum, 2009), which
//! defines both. Strict: it refuses Y, Z, G and H parameters, mixed-mode
//! data, other versions, unknown keywords, numbers that are not finite,
//! frequencies that do not rise, counts that differ from declared ones, and
//! more than 1,000,000 frequencies; every error carries its line and byte
//! span. Data wraps freely between complex pairs, but each frequency point
//! starts a new line (which is how a port count other than the file name's
//! shows). Noise parameters are checked and skipped.
//!
//! No Touchstone crate: the crates.io `touchstone` crate is a young 0.x
//! release that changes fast and bundles plotting and a command line, and
//! its errors carry no byte spans.

use std::fmt;
use std::ops::Range;

use num_complex::Complex64;

/// More ports than this are refused.
pub const MAX_PORTS: usize = 64;
/// More frequency points (or noise rows) than this are refused.
pub const MAX_FREQUENCIES: usize = 1_000_000;

/// The file's syntax: option line and data (1.x), or keywords (2.0).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TouchstoneVersion {
    V1,
    V2,
}

/// An n-port's S parameters, as read.
#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    pub version: TouchstoneVersion,
    pub ports: usize,
    /// Hz, strictly increasing (0 is allowed: a DC point).
    pub frequencies: Vec<f64>,
    /// Per-port reference impedance, ohm (version 1: all the option line's R).
    pub reference: Vec<f64>,
    /// Per frequency, row-major n*n: `s[k][i*n + j]` = S_(i+1)(j+1).
    pub s: Vec<Vec<Complex64>>,
}

/// Why a file was refused: 1-based line, byte range in the text of the
/// offending token or line, and a sentence.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TouchstoneError {
    pub line: usize,
    pub span: Range<usize>,
    pub message: String,
}

impl fmt::Display for TouchstoneError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "line {}: {}", self.line, self.message)
    }
}

impl std::error::Error for TouchstoneError {}

/// The port count a file name states: `.s2p` → 2, `.S4P` → 4, `.s100p` →
/// 100 (which [`parse`] refuses); anything else (`.ts`, `.s0p`, `.s02p`, no
/// extension) → None.
pub fn ports_from_extension(file_name: &str) -> Option<usize> {
    let ext = std::path::Path::new(file_name).extension()?.to_str()?;
    let inner = ext.strip_prefix(['s', 'S'])?.strip_suffix(['p', 'P'])?;
    if inner.is_empty() || inner.starts_with('0') || !inner.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    inner.parse().ok()
}

/// Reads a Touchstone file. `expected_ports` is the port count the file
/// name states ([`ports_from_extension`]): a version 1 file needs it, a
/// version 2.0 file must agree with it. Never panics; memory grows with the
/// text only, never with a count the file declares.
pub fn parse(text: &str, expected_ports: Option<usize>) -> Result<Network, TouchstoneError> {
    let lines = split_lines(text);
    let Some(first) = lines.first() else {
        let message = if text.bytes().all(is_space_or_newline) {
            "empty file: no option line and no data"
        } else {
            "the file holds only comments: no option line and no data"
        };
        return Err(TouchstoneError {
            line: 1,
            span: 0..0,
            message: message.into(),
        });
    };
    match first.lead() {
        b'#' => parse_v1(&lines, expected_ports),
        b'[' => {
            let kw = keyword(first)?;
            if kw.name == "version" {
                parse_v2(&lines, kw, expected_ports)
            } else {
                Err(first.err(format!(
                    "{} comes before [Version]: a version 2.0 file starts with [Version] 2.0, a version 1 file with its option line",
                    kw.shown
                )))
            }
        }
        _ => Err(first.err(
            "data before the option line: a Touchstone file starts (after comments) with an option line such as '# GHz S RI R 50', or with [Version] 2.0",
        )),
    }
}

// ---------------------------------------------------------------- lines

/// A line with something besides comments and blanks.
#[derive(Debug)]
struct Line<'a> {
    /// Index in the list of such lines.
    idx: usize,
    /// 1-based line number in the text.
    no: usize,
    /// Byte offset of `body` in the text.
    off: usize,
    /// The line without its comment and line end.
    body: &'a str,
}

/// One whitespace-separated word of a line.
#[derive(Debug, Clone, Copy)]
struct Tok<'a> {
    text: &'a str,
    no: usize,
    idx: usize,
    start: usize,
    /// The first word of its line.
    first: bool,
}

impl Tok<'_> {
    fn err(&self, message: impl Into<String>) -> TouchstoneError {
        TouchstoneError {
            line: self.no,
            span: self.start..self.start + self.text.len(),
            message: message.into(),
        }
    }
}

fn is_space(b: u8) -> bool {
    matches!(b, b' ' | b'\t' | b'\r' | 0x0b | 0x0c)
}

fn is_space_or_newline(b: u8) -> bool {
    is_space(b) || b == b'\n'
}

impl<'a> Line<'a> {
    /// The first byte that is not whitespace.
    fn lead(&self) -> u8 {
        self.body.bytes().find(|&b| !is_space(b)).unwrap_or(b' ')
    }

    fn span(&self) -> Range<usize> {
        let b = self.body.as_bytes();
        let s = b.iter().position(|&c| !is_space(c)).unwrap_or(0);
        let e = b.iter().rposition(|&c| !is_space(c)).map_or(s, |p| p + 1);
        self.off + s..self.off + e
    }

    fn err(&self, message: impl Into<String>) -> TouchstoneError {
        TouchstoneError {
            line: self.no,
            span: self.span(),
            message: message.into(),
        }
    }

    fn tokens(&self) -> Vec<Tok<'a>> {
        tokens_in(self.body, self.off, self, true)
    }
}

/// The words of `s` (at byte `off` of the text, on `line`); `line_start`:
/// whether `s` starts its line (the first word is then marked `first`).
fn tokens_in<'a>(s: &'a str, off: usize, line: &Line<'_>, line_start: bool) -> Vec<Tok<'a>> {
    let b = s.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        while i < b.len() && is_space(b[i]) {
            i += 1;
        }
        let st = i;
        while i < b.len() && !is_space(b[i]) {
            i += 1;
        }
        // Whitespace is ASCII, so `st` and `i` are character boundaries.
        if let Some(text) = s.get(st..i).filter(|t| !t.is_empty()) {
            out.push(Tok {
                text,
                no: line.no,
                idx: line.idx,
                start: off + st,
                first: line_start && out.is_empty(),
            });
        }
    }
    out
}

/// The lines that hold more than comments and blanks. A line ends at LF,
/// CR LF or a lone CR (TS2, general syntax rules: CR or CR LF).
fn split_lines(text: &str) -> Vec<Line<'_>> {
    let bytes = text.as_bytes();
    let mut lines = Vec::new();
    let mut start = 0;
    let mut no = 1;
    loop {
        let end = bytes[start..]
            .iter()
            .position(|&b| b == b'\n' || b == b'\r')
            .map_or(text.len(), |i| start + i);
        // `end` is at an ASCII byte or the end: a character boundary.
        let seg = &text[start..end];
        let content = seg.find('!').unwrap_or(seg.len());
        let bom = if no == 1 && seg.starts_with('\u{feff}') {
            '\u{feff}'.len_utf8()
        } else {
            0
        };
        let body = &seg[bom.min(content)..content];
        if body.bytes().any(|b| !is_space(b)) {
            lines.push(Line {
                idx: lines.len(),
                no,
                off: start + bom.min(content),
                body,
            });
        }
        match bytes.get(end..end + 2) {
            _ if end >= text.len() => return lines,
            Some(b"\r\n") => start = end + 2,
            _ => start = end + 1,
        }
        no += 1;
    }
}

/// The values of a data section, word by word across lines; it stops
/// before a keyword line (`[`) or an option line (`#`).
struct Stream<'l, 'a> {
    lines: &'l [Line<'a>],
    next: usize,
    toks: Vec<Tok<'a>>,
    pos: usize,
}

impl<'l, 'a> Stream<'l, 'a> {
    fn new(lines: &'l [Line<'a>], from: usize) -> Self {
        Stream {
            lines,
            next: from,
            toks: Vec::new(),
            pos: 0,
        }
    }

    fn peek(&mut self) -> Option<Tok<'a>> {
        while self.pos >= self.toks.len() {
            let l = self.lines.get(self.next)?;
            if matches!(l.lead(), b'[' | b'#') {
                return None;
            }
            self.toks = l.tokens();
            self.pos = 0;
            self.next += 1;
        }
        self.toks.get(self.pos).copied()
    }

    fn value(&mut self) -> Option<Tok<'a>> {
        let t = self.peek()?;
        self.pos += 1;
        Some(t)
    }

    /// How many values the line of the last value read holds.
    fn line_len(&self) -> usize {
        self.toks.len()
    }

    /// After `peek` gave None: the line that ended the data (a keyword or
    /// option line), or None at the end of the file.
    fn stop(&self) -> Option<&'l Line<'a>> {
        if self.pos < self.toks.len() {
            return None;
        }
        self.lines.get(self.next)
    }
}

/// At most 32 characters of `s`, quoted, control characters escaped.
fn show(s: &str) -> String {
    let mut out = String::from("'");
    for (i, c) in s.chars().enumerate() {
        if i == 32 {
            out.push('…');
            break;
        }
        if c.is_control() {
            out.extend(c.escape_default());
        } else {
            out.push(c);
        }
    }
    out.push('\'');
    out
}

fn number(t: &Tok<'_>, what: &str) -> Result<f64, TouchstoneError> {
    match t.text.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err(t.err(format!("{what} {} is not a finite number", show(t.text)))),
        Err(_) => Err(t.err(format!("{what} {} is not a number", show(t.text)))),
    }
}

// ---------------------------------------------------------------- option line

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Format {
    Ri,
    Ma,
    Db,
}

#[derive(Debug, Clone, Copy)]
struct Options {
    /// Hz per unit of the file's frequencies.
    scale: f64,
    unit: &'static str,
    format: Format,
    /// Reference impedance, ohm.
    r: f64,
    /// Line number of the option line.
    no: usize,
}

/// `# [Hz|kHz|MHz|GHz] [S|Y|Z|G|H] [DB|MA|RI] [R n]`, any order, any case;
/// defaults GHz, S, MA, R 50.
fn option_line(l: &Line<'_>) -> Result<Options, TouchstoneError> {
    let mut words = Vec::new();
    for t in l.tokens() {
        match t.text.strip_prefix('#') {
            Some("") => {}
            Some(rest) if t.first => words.push(Tok {
                text: rest,
                start: t.start + 1,
                first: false,
                ..t
            }),
            _ => words.push(t),
        }
    }
    let mut unit: Option<(&'static str, f64, Tok<'_>)> = None;
    let mut param: Option<Tok<'_>> = None;
    let mut format: Option<(Format, Tok<'_>)> = None;
    let mut r: Option<(f64, Tok<'_>)> = None;
    fn twice(what: &str, first: &Tok<'_>, again: &Tok<'_>) -> TouchstoneError {
        again.err(format!(
            "the option line gives the {what} twice ({} and {})",
            show(first.text),
            show(again.text)
        ))
    }
    let mut it = words.into_iter();
    while let Some(t) = it.next() {
        let word = t.text.to_ascii_lowercase();
        match word.as_str() {
            "hz" | "khz" | "mhz" | "ghz" => {
                if let Some((_, _, first)) = &unit {
                    return Err(twice("frequency unit", first, &t));
                }
                let (name, scale) = match word.as_str() {
                    "hz" => ("Hz", 1.0),
                    "khz" => ("kHz", 1e3),
                    "mhz" => ("MHz", 1e6),
                    _ => ("GHz", 1e9),
                };
                unit = Some((name, scale, t));
            }
            "s" => {
                if let Some(first) = &param {
                    return Err(twice("parameter", first, &t));
                }
                param = Some(t);
            }
            "y" | "z" | "g" | "h" => {
                let name = match word.as_str() {
                    "y" => "Y parameters (admittance)",
                    "z" => "Z parameters (impedance)",
                    "g" => "G parameters (hybrid-g)",
                    _ => "H parameters (hybrid-h)",
                };
                return Err(t.err(format!(
                    "the option line declares {name}: only S parameters are read; convert the file to S parameters"
                )));
            }
            "db" | "ma" | "ri" => {
                if let Some((_, first)) = &format {
                    return Err(twice("data format", first, &t));
                }
                let f = match word.as_str() {
                    "db" => Format::Db,
                    "ma" => Format::Ma,
                    _ => Format::Ri,
                };
                format = Some((f, t));
            }
            "r" => {
                if let Some((_, first)) = &r {
                    return Err(twice("reference impedance", first, &t));
                }
                let Some(v) = it.next() else {
                    return Err(t.err(
                        "R in the option line needs the reference impedance after it, e.g. R 50",
                    ));
                };
                let z = number(&v, "the option line's reference impedance")?;
                if z <= 0.0 {
                    return Err(v.err(format!(
                        "the option line's reference impedance {} is not positive",
                        show(v.text)
                    )));
                }
                r = Some((z, t));
            }
            _ => {
                return Err(t.err(format!(
                    "unknown option {} in the option line: expected a frequency unit (Hz, kHz, MHz, GHz), the parameter S, a format (DB, MA, RI) or R and the reference impedance",
                    show(t.text)
                )))
            }
        }
    }
    let (unit, scale) = unit.map_or(("GHz", 1e9), |(n, s, _)| (n, s));
    Ok(Options {
        scale,
        unit,
        format: format.map_or(Format::Ma, |(f, _)| f),
        r: r.map_or(50.0, |(z, _)| z),
        no: l.no,
    })
}

// ---------------------------------------------------------------- values

/// The frequency of a point in Hz: finite, not negative.
fn frequency(t: &Tok<'_>, o: &Options) -> Result<f64, TouchstoneError> {
    let v = number(t, "frequency")?;
    if v < 0.0 {
        return Err(t.err(format!("frequency {} {} is negative", show(t.text), o.unit)));
    }
    let f = v * o.scale;
    if !f.is_finite() {
        return Err(t.err(format!(
            "frequency {} {} is too large",
            show(t.text),
            o.unit
        )));
    }
    // -0 is 0.
    Ok(f + 0.0)
}

/// m∠deg, exact at whole multiples of 90° (the quadrant is taken out
/// before the sine and cosine).
fn polar_deg(m: f64, deg: f64) -> Complex64 {
    let q = (deg / 90.0).round();
    let (s, c) = (deg - q * 90.0).to_radians().sin_cos();
    let (cos, sin) = match q.rem_euclid(4.0) as u8 {
        0 => (c, s),
        1 => (-s, c),
        2 => (-c, -s),
        _ => (s, -c),
    };
    Complex64::new(m * cos, m * sin)
}

fn complex(a: &Tok<'_>, b: &Tok<'_>, format: Format) -> Result<Complex64, TouchstoneError> {
    match format {
        Format::Ri => Ok(Complex64::new(
            number(a, "real part")?,
            number(b, "imaginary part")?,
        )),
        Format::Ma => {
            let m = number(a, "magnitude")?;
            let deg = number(b, "angle")?;
            if m < 0.0 {
                return Err(a.err(format!(
                    "magnitude {} is negative (MA data: magnitude, angle in degrees)",
                    show(a.text)
                )));
            }
            Ok(polar_deg(m, deg))
        }
        Format::Db => {
            let db = number(a, "dB magnitude")?;
            let deg = number(b, "angle")?;
            let m = 10f64.powf(db / 20.0);
            if !m.is_finite() {
                return Err(a.err(format!("dB magnitude {} is too large", show(a.text))));
            }
            Ok(polar_deg(m, deg))
        }
    }
}

// ---------------------------------------------------------------- network data

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Matrix {
    Full,
    Lower,
    Upper,
}

/// Which matrix entry each complex value of a frequency point fills.
struct Layout {
    n: usize,
    order: Vec<(usize, usize)>,
    /// Lower or Upper: each value fills its mirror entry too.
    symmetric: bool,
    v1: bool,
}

impl Layout {
    fn new(n: usize, matrix: Matrix, order_21_12: bool, v1: bool) -> Layout {
        let mut order = Vec::new();
        match matrix {
            Matrix::Full if n == 2 && order_21_12 => {
                order.extend([(0, 0), (1, 0), (0, 1), (1, 1)]);
            }
            Matrix::Full => {
                for i in 0..n {
                    order.extend((0..n).map(|j| (i, j)));
                }
            }
            Matrix::Lower => {
                for i in 0..n {
                    order.extend((0..=i).map(|j| (i, j)));
                }
            }
            Matrix::Upper => {
                for i in 0..n {
                    order.extend((i..n).map(|j| (i, j)));
                }
            }
        }
        Layout {
            n,
            order,
            symmetric: matrix != Matrix::Full,
            v1,
        }
    }

    /// Values per frequency point.
    fn values(&self) -> usize {
        1 + 2 * self.order.len()
    }

    fn describe(&self) -> String {
        format!(
            "the frequency and {} complex values of a {}-port{}",
            self.order.len(),
            self.n,
            if self.symmetric { " triangle" } else { "" }
        )
    }

    /// The port count whose point has `values` values, if any.
    fn ports_for(&self, values: usize) -> Option<usize> {
        if values % 2 == 0 {
            return None;
        }
        let m = (values - 1) / 2;
        (1..=MAX_PORTS).find(|&p| {
            if self.symmetric {
                p * (p + 1) / 2 == m
            } else {
                p * p == m
            }
        })
    }
}

/// How many values the frequency point starting on line `idx` holds, by
/// the line structure: its first line and the lines after it that hold an
/// even number of values (a line with an odd number starts a point).
fn values_in_point(lines: &[Line<'_>], idx: usize) -> usize {
    let Some(first) = lines.get(idx) else {
        return 0;
    };
    let mut count = first.tokens().len();
    for l in lines.iter().skip(idx + 1) {
        if matches!(l.lead(), b'[' | b'#') {
            break;
        }
        let k = l.tokens().len();
        if k % 2 == 1 {
            break;
        }
        count += k;
    }
    count
}

/// A frequency point that is not laid out as one: too few or too many
/// values, or a line break inside a complex pair.
fn shape_error(lines: &[Line<'_>], lay: &Layout, k: usize, ft: &Tok<'_>) -> TouchstoneError {
    let found = values_in_point(lines, ft.idx);
    let per = lay.values();
    let mut msg = if found == per {
        format!("frequency point {k} (line {}) has its {per} values but a line break splits a complex pair", ft.no)
    } else {
        format!(
            "frequency point {k} (line {}) holds {found} values, expected {per} ({})",
            ft.no,
            lay.describe()
        )
    };
    if let Some(p) = lay.ports_for(found).filter(|&p| p != lay.n) {
        msg.push_str(&format!(
            "; {found} values make a {p}-port point: does the file have {p} ports{}?",
            if lay.v1 {
                " (a version 1 file's port count comes from its name)"
            } else {
                ""
            }
        ));
    }
    msg.push_str(
        "; each frequency point starts a new line, and lines break only between complex pairs",
    );
    match lines.get(ft.idx) {
        Some(l) => l.err(msg),
        None => ft.err(msg),
    }
}

fn order_error(
    ft: &Tok<'_>,
    pt: &Tok<'_>,
    equal: bool,
    o: &Options,
    noise_line_len: Option<usize>,
) -> TouchstoneError {
    let mut msg = format!(
        "frequency {} {} (line {}) {} the previous point's {} {} (line {}): frequencies must increase strictly",
        show(ft.text),
        o.unit,
        ft.no,
        if equal { "repeats" } else { "is below" },
        show(pt.text),
        o.unit,
        pt.no
    );
    if let Some(len) = noise_line_len {
        msg.push_str(&format!(
            "; in a 2-port file a falling frequency starts the noise parameters, rows of 5 values, but this line holds {len}"
        ));
    }
    ft.err(msg)
}

struct Points {
    frequencies: Vec<f64>,
    s: Vec<Vec<Complex64>>,
}

/// The frequency points of a data section. `declared`: [Number of
/// Frequencies] and its line; `v1_noise`: a version 1 2-port, where a
/// falling frequency on a line of 5 values starts the noise parameters
/// (skipped to the end of the data).
fn read_points<'a>(
    st: &mut Stream<'_, 'a>,
    lines: &[Line<'a>],
    lay: &Layout,
    o: &Options,
    declared: Option<(usize, usize)>,
    v1_noise: bool,
) -> Result<Points, TouchstoneError> {
    let per = lay.values();
    let n = lay.n;
    let mut frequencies = Vec::new();
    let mut s = Vec::new();
    let mut prev: Option<(f64, Tok<'a>)> = None;
    let mut vals: Vec<Tok<'a>> = Vec::new();
    while let Some(ft) = st.value() {
        let k = frequencies.len() + 1;
        if let Some((d, dl)) = declared {
            if frequencies.len() >= d {
                return Err(ft.err(format!(
                    "more network data than [Number of Frequencies] {d} (line {dl}) declares: frequency point {k} starts here"
                )));
            }
        }
        if frequencies.len() >= MAX_FREQUENCIES {
            return Err(ft.err(format!(
                "more than {MAX_FREQUENCIES} frequency points: the limit of this reader"
            )));
        }
        if st.line_len() % 2 == 0 {
            // A line with an even number of values cannot start a point.
            // The previous point runs on into it when the two make a point
            // of some port count; otherwise this line is a point short of
            // values.
            return Err(match &prev {
                Some((_, pt)) if lay.ports_for(values_in_point(lines, pt.idx)).is_some() => {
                    shape_error(lines, lay, k - 1, pt)
                }
                _ => shape_error(lines, lay, k, &ft),
            });
        }
        let f = frequency(&ft, o)?;
        if let Some((pf, pt)) = &prev {
            if f <= *pf {
                if v1_noise && st.line_len() == 5 {
                    noise(st, lines, Some(ft), o, None).map_err(|mut e| {
                        e.message.push_str(&format!(
                            " (in a 2-port file the noise parameters start where the frequency falls, here on line {})",
                            ft.no
                        ));
                        e
                    })?;
                    break;
                }
                return Err(order_error(
                    &ft,
                    pt,
                    f == *pf,
                    o,
                    v1_noise.then(|| st.line_len()),
                ));
            }
        }
        vals.clear();
        while vals.len() + 1 < per {
            match st.value() {
                Some(t) if !(t.first && st.line_len() % 2 == 1) => vals.push(t),
                _ => return Err(shape_error(lines, lay, k, &ft)),
            }
        }
        if st.peek().is_some_and(|t| !t.first) {
            return Err(shape_error(lines, lay, k, &ft));
        }
        let mut m = vec![Complex64::new(0.0, 0.0); n * n];
        for (pair, &(i, j)) in vals.chunks_exact(2).zip(&lay.order) {
            let v = complex(&pair[0], &pair[1], o.format)?;
            if let Some(slot) = m.get_mut(i * n + j) {
                *slot = v;
            }
            if lay.symmetric {
                if let Some(slot) = m.get_mut(j * n + i) {
                    *slot = v;
                }
            }
        }
        frequencies.push(f);
        s.push(m);
        prev = Some((f, ft));
    }
    Ok(Points { frequencies, s })
}

/// Noise parameter rows (frequency, minimum noise figure in dB, |Γopt|,
/// angle of Γopt in degrees, normalised noise resistance), one a line,
/// frequencies rising; checked and counted, not kept. `first`: the row's
/// first value when already read; `declared`: [Number of Noise
/// Frequencies] and its line.
fn noise<'a>(
    st: &mut Stream<'_, 'a>,
    lines: &[Line<'a>],
    first: Option<Tok<'a>>,
    o: &Options,
    declared: Option<(usize, usize)>,
) -> Result<usize, TouchstoneError> {
    let mut rows = 0usize;
    let mut prev: Option<(f64, Tok<'a>)> = None;
    let mut next = match first {
        Some(t) => Some(t),
        None => st.value(),
    };
    while let Some(ft) = next {
        if let Some((d, dl)) = declared {
            if rows >= d {
                return Err(ft.err(format!(
                    "more noise data than [Number of Noise Frequencies] {d} (line {dl}) declares: row {} starts here",
                    rows + 1
                )));
            }
        }
        if rows >= MAX_FREQUENCIES {
            return Err(ft.err(format!(
                "more than {MAX_FREQUENCIES} noise parameter rows: the limit of this reader"
            )));
        }
        if !ft.first || st.line_len() != 5 {
            let msg = format!(
                "noise parameters are rows of 5 values, one a line (frequency, minimum noise figure in dB, |Γopt|, angle of Γopt in degrees, normalised noise resistance); line {} holds {}",
                ft.no,
                st.line_len()
            );
            return Err(match lines.get(ft.idx) {
                Some(l) => l.err(msg),
                None => ft.err(msg),
            });
        }
        let f = frequency(&ft, o)?;
        if let Some((pf, pt)) = &prev {
            if f <= *pf {
                return Err(ft.err(format!(
                    "noise frequency {} {} (line {}) is not above the previous row's {} {} (line {}): noise frequencies must increase strictly",
                    show(ft.text),
                    o.unit,
                    ft.no,
                    show(pt.text),
                    o.unit,
                    pt.no
                )));
            }
        }
        for _ in 0..4 {
            if let Some(t) = st.value() {
                number(&t, "noise parameter")?;
            }
        }
        rows += 1;
        prev = Some((f, ft));
        next = st.value();
    }
    Ok(rows)
}

// ---------------------------------------------------------------- version 1

fn parse_v1(lines: &[Line<'_>], expected: Option<usize>) -> Result<Network, TouchstoneError> {
    let Some(ol) = lines.first() else {
        return Err(TouchstoneError {
            line: 1,
            span: 0..0,
            message: "empty file: no option line and no data".into(),
        });
    };
    let o = option_line(ol)?;
    let n = match expected {
        None => {
            return Err(ol.err(
                "a version 1 file does not state its port count, which comes from its name (.s2p: 2 ports), and none was given",
            ))
        }
        Some(0) => return Err(ol.err("0 ports expected (from the file name): a network has at least 1")),
        Some(n) if n > MAX_PORTS => {
            return Err(ol.err(format!(
                "{n} ports expected (from the file name): more than {MAX_PORTS} are refused"
            )))
        }
        Some(n) => n,
    };
    let lay = Layout::new(n, Matrix::Full, true, true);
    let mut st = Stream::new(lines, 1);
    let pts = read_points(&mut st, lines, &lay, &o, None, n == 2)?;
    if let Some(l) = st.stop() {
        return Err(if l.lead() == b'#' {
            l.err(format!(
                "a second option line (the first is on line {}): a file has one",
                o.no
            ))
        } else {
            let what = keyword(l).map_or_else(|_| "a keyword".to_string(), |k| k.shown);
            l.err(format!(
                "{what} in a version 1 file: a version 2.0 file starts with [Version] 2.0"
            ))
        });
    }
    if pts.frequencies.is_empty() {
        return Err(ol.err("no network data after the option line"));
    }
    Ok(Network {
        version: TouchstoneVersion::V1,
        ports: n,
        frequencies: pts.frequencies,
        reference: vec![o.r; n],
        s: pts.s,
    })
}

// ---------------------------------------------------------------- version 2

/// A keyword line: `[Name] arguments`.
struct Keyword<'l, 'a> {
    /// Lower case, single spaces.
    name: String,
    /// As written, with its brackets, for messages.
    shown: String,
    args: Vec<Tok<'a>>,
    line: &'l Line<'a>,
}

impl Keyword<'_, '_> {
    fn err(&self, message: impl Into<String>) -> TouchstoneError {
        self.line.err(message)
    }

    fn no_args(&self) -> Result<(), TouchstoneError> {
        match self.args.first() {
            Some(t) => Err(t.err(format!(
                "{} takes no value on its line; {} is extra",
                self.shown,
                show(t.text)
            ))),
            None => Ok(()),
        }
    }

    fn one_arg(&self) -> Result<Tok<'_>, TouchstoneError> {
        match self.args.as_slice() {
            [t] => Ok(*t),
            [] => Err(self.err(format!("{} needs a value", self.shown))),
            [_, extra, ..] => Err(extra.err(format!(
                "{} takes one value; {} is extra",
                self.shown,
                show(extra.text)
            ))),
        }
    }

    /// A whole number from 1 to `max`.
    fn count(&self, max: usize, limit: &str) -> Result<usize, TouchstoneError> {
        let t = self.one_arg()?;
        let digits = !t.text.is_empty() && t.text.bytes().all(|b| b.is_ascii_digit());
        match t.text.parse::<usize>() {
            Ok(0) => Err(t.err(format!("{} must be at least 1", self.shown))),
            Ok(v) if v <= max => Ok(v),
            Ok(_) => Err(t.err(format!(
                "{} {}: more than {max} {limit} are refused",
                self.shown,
                show(t.text)
            ))),
            Err(_) if digits => Err(t.err(format!(
                "{} {}: more than {max} {limit} are refused",
                self.shown,
                show(t.text)
            ))),
            Err(_) => Err(t.err(format!(
                "{} needs a whole number, found {}",
                self.shown,
                show(t.text)
            ))),
        }
    }
}

fn keyword<'l, 'a>(l: &'l Line<'a>) -> Result<Keyword<'l, 'a>, TouchstoneError> {
    let lead = l.body.bytes().position(|b| !is_space(b)).unwrap_or(0);
    let rest = &l.body[lead..];
    let Some(close) = rest.find(']') else {
        return Err(l.err("a keyword's '[' has no closing ']'"));
    };
    let inner = &rest[1.min(close)..close];
    let name = inner
        .split_ascii_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
        .to_ascii_lowercase();
    let shown = show(&rest[..=close]);
    let shown = shown
        .strip_prefix('\'')
        .and_then(|s| s.strip_suffix('\''))
        .unwrap_or(&shown)
        .to_string();
    let args = tokens_in(&rest[close + 1..], l.off + lead + close + 1, l, false);
    Ok(Keyword {
        name,
        shown,
        args,
        line: l,
    })
}

fn parse_v2<'a>(
    lines: &[Line<'a>],
    version: Keyword<'_, 'a>,
    expected: Option<usize>,
) -> Result<Network, TouchstoneError> {
    let v = version.one_arg()?;
    match v.text.parse::<f64>() {
        Ok(2.0) => {}
        Ok(_) => {
            return Err(v.err(format!(
                "Touchstone version {} is not read: this reader follows versions 1.x and 2.0",
                show(v.text)
            )))
        }
        Err(_) => {
            return Err(v.err(format!(
                "[Version] needs a version number such as 2.0, found {}",
                show(v.text)
            )))
        }
    }
    let mut seen: Vec<(String, usize)> = vec![("version".into(), version.line.no)];
    let mut opts: Option<Options> = None;
    let mut ports: Option<usize> = None;
    let mut order_21_12: Option<(bool, usize)> = None;
    let mut nfreq: Option<(usize, usize)> = None;
    let mut nnoise: Option<(usize, usize)> = None;
    let mut reference: Option<Vec<f64>> = None;
    let mut matrix = Matrix::Full;
    let mut i = 1;
    let (data_start, data_kw) = loop {
        let Some(l) = lines.get(i) else {
            let last = lines.last().unwrap_or(version.line);
            return Err(last.err("the file ends without [Network Data]"));
        };
        i += 1;
        match l.lead() {
            b'#' => {
                if let Some(o) = &opts {
                    return Err(l.err(format!(
                        "a second option line (the first is on line {}): a file has one",
                        o.no
                    )));
                }
                opts = Some(option_line(l)?);
            }
            b'[' => {
                let kw = keyword(l)?;
                if let Some((_, at)) = seen.iter().find(|(n, _)| *n == kw.name) {
                    return Err(kw.err(format!(
                        "{} appears twice (lines {at} and {})",
                        kw.shown, l.no
                    )));
                }
                seen.push((kw.name.clone(), l.no));
                match kw.name.as_str() {
                    "number of ports" => {
                        let n = kw.count(MAX_PORTS, "ports")?;
                        if let Some(e) = expected.filter(|&e| e != n) {
                            return Err(kw.err(format!(
                                "[Number of Ports] is {n} but {e} ports were expected (from the file name)"
                            )));
                        }
                        ports = Some(n);
                    }
                    "two-port data order" => {
                        let t = kw.one_arg()?;
                        let o = match t.text.to_ascii_lowercase().as_str() {
                            "12_21" => false,
                            "21_12" => true,
                            _ => {
                                return Err(t.err(format!(
                                    "[Two-Port Data Order] is 12_21 or 21_12, not {}",
                                    show(t.text)
                                )))
                            }
                        };
                        order_21_12 = Some((o, l.no));
                    }
                    "number of frequencies" => {
                        nfreq = Some((kw.count(MAX_FREQUENCIES, "frequency points")?, l.no));
                    }
                    "number of noise frequencies" => {
                        nnoise = Some((kw.count(MAX_FREQUENCIES, "noise frequencies")?, l.no));
                    }
                    "reference" => {
                        let Some(n) = ports else {
                            return Err(kw.err(
                                "[Reference] comes before [Number of Ports], which says how many impedances it lists",
                            ));
                        };
                        let (z, next) = read_reference(lines, i, &kw, n)?;
                        reference = Some(z);
                        i = next;
                    }
                    "matrix format" => {
                        let t = kw.one_arg()?;
                        matrix = match t.text.to_ascii_lowercase().as_str() {
                            "full" => Matrix::Full,
                            "lower" => Matrix::Lower,
                            "upper" => Matrix::Upper,
                            _ => {
                                return Err(t.err(format!(
                                    "[Matrix Format] is Full, Lower or Upper, not {}",
                                    show(t.text)
                                )))
                            }
                        };
                    }
                    "mixed-mode order" => {
                        return Err(kw.err(
                            "[Mixed-Mode Order]: mixed-mode data is not supported; convert the file to single-ended S parameters",
                        ))
                    }
                    "begin information" => {
                        kw.no_args()?;
                        let end = lines.iter().skip(i).find(|m| {
                            m.lead() == b'['
                                && keyword(m).is_ok_and(|k| k.name == "end information")
                        });
                        let Some(end) = end else {
                            return Err(kw.err("[Begin Information] is never closed by [End Information]"));
                        };
                        keyword(end)?.no_args()?;
                        seen.push(("end information".into(), end.no));
                        i = end.idx + 1;
                    }
                    "end information" => {
                        return Err(kw.err("[End Information] without [Begin Information]"))
                    }
                    "network data" => {
                        kw.no_args()?;
                        break (i, kw);
                    }
                    "noise data" => return Err(kw.err("[Noise Data] comes before [Network Data]")),
                    "end" => return Err(kw.err("[End] comes before [Network Data]")),
                    _ => {
                        return Err(kw.err(format!(
                            "unknown keyword {} (this reader follows Touchstone 2.0)",
                            kw.shown
                        )))
                    }
                }
            }
            _ => {
                let t = l.tokens().into_iter().next();
                let what = t.map_or_else(String::new, |t| format!("{} ", show(t.text)));
                return Err(l.err(format!(
                    "{what}before [Network Data]: a version 2.0 header holds keywords and the option line only"
                )));
            }
        }
    };
    let Some(o) = opts else {
        return Err(data_kw.err("no option line (such as '# GHz S RI R 50') before [Network Data]"));
    };
    let Some(n) = ports else {
        return Err(data_kw.err("[Number of Ports] is missing before [Network Data]"));
    };
    let order = match (n, order_21_12) {
        (2, Some((o, _))) => o,
        (2, None) => {
            return Err(data_kw.err(
                "[Two-Port Data Order] (12_21 or 21_12) is required in a 2-port file and is missing before [Network Data]",
            ))
        }
        (_, Some((_, at))) => {
            let l = lines.iter().find(|l| l.no == at).unwrap_or(data_kw.line);
            return Err(l.err(format!(
                "[Two-Port Data Order] is for 2-port files; this one has {n} ports"
            )));
        }
        (_, None) => false,
    };
    let Some((nf, nf_line)) = nfreq else {
        return Err(data_kw.err("[Number of Frequencies] is missing before [Network Data]"));
    };
    let lay = Layout::new(n, matrix, order, false);
    let mut st = Stream::new(lines, data_start);
    let pts = read_points(&mut st, lines, &lay, &o, Some((nf, nf_line)), false)?;
    let stop = st.stop();
    if pts.frequencies.len() < nf {
        let msg = format!(
            "[Number of Frequencies] is {nf} (line {nf_line}) but the network data holds {} frequency points",
            pts.frequencies.len()
        );
        return Err(match stop {
            Some(l) => l.err(msg),
            None => lines.last().unwrap_or(data_kw.line).err(msg),
        });
    }
    let mut stop = stop;
    let mut noise_done = false;
    loop {
        let Some(l) = stop else {
            let last = lines.last().unwrap_or(data_kw.line);
            return Err(last.err("the file ends without [End]"));
        };
        if l.lead() == b'#' {
            return Err(l.err(format!(
                "a second option line (the first is on line {}): a file has one",
                o.no
            )));
        }
        let kw = keyword(l)?;
        match kw.name.as_str() {
            "noise data" if !noise_done => {
                kw.no_args()?;
                let Some((nn, nn_line)) = nnoise else {
                    return Err(kw.err("[Noise Data] without [Number of Noise Frequencies]"));
                };
                if n != 2 {
                    return Err(kw.err(format!(
                        "noise parameters are defined for 2-port networks; this one has {n} ports"
                    )));
                }
                let mut ns = Stream::new(lines, l.idx + 1);
                let rows = noise(&mut ns, lines, None, &o, Some((nn, nn_line)))?;
                let next = ns.stop();
                if rows < nn {
                    let msg = format!(
                        "[Number of Noise Frequencies] is {nn} (line {nn_line}) but [Noise Data] holds {rows} rows"
                    );
                    return Err(match next {
                        Some(m) => m.err(msg),
                        None => lines.last().unwrap_or(l).err(msg),
                    });
                }
                noise_done = true;
                stop = next;
            }
            "end" => {
                kw.no_args()?;
                if let (Some((nn, nn_line)), false) = (nnoise, noise_done) {
                    return Err(kw.err(format!(
                        "[Number of Noise Frequencies] is {nn} (line {nn_line}) but the file has no [Noise Data]"
                    )));
                }
                if let Some(extra) = lines.get(l.idx + 1) {
                    return Err(extra.err("text after [End]"));
                }
                break;
            }
            _ => {
                return Err(kw.err(format!(
                    "{} after the network data: only [Noise Data] and [End] may follow it",
                    kw.shown
                )))
            }
        }
    }
    Ok(Network {
        version: TouchstoneVersion::V2,
        ports: n,
        frequencies: pts.frequencies,
        reference: reference.unwrap_or_else(|| vec![o.r; n]),
        s: pts.s,
    })
}

/// [Reference]: `n` positive impedances on its line and the lines after it;
/// returns them and the index of the line after the last one.
fn read_reference(
    lines: &[Line<'_>],
    mut i: usize,
    kw: &Keyword<'_, '_>,
    n: usize,
) -> Result<(Vec<f64>, usize), TouchstoneError> {
    fn take(z: &mut Vec<f64>, t: &Tok<'_>, n: usize) -> Result<(), TouchstoneError> {
        if z.len() == n {
            return Err(t.err(format!(
                "[Reference] lists more than {n} impedances for {n} ports"
            )));
        }
        let v = number(t, "reference impedance")?;
        if v <= 0.0 {
            return Err(t.err(format!(
                "reference impedance {} is not positive",
                show(t.text)
            )));
        }
        z.push(v);
        Ok(())
    }
    let mut z = Vec::with_capacity(n);
    for t in &kw.args {
        take(&mut z, t, n)?;
    }
    while z.len() < n {
        match lines.get(i) {
            Some(l) if !matches!(l.lead(), b'[' | b'#') => {
                for t in l.tokens() {
                    take(&mut z, &t, n)?;
                }
                i += 1;
            }
            _ => {
                return Err(kw.err(format!(
                    "[Reference] lists {} impedances for {n} ports",
                    z.len()
                )))
            }
        }
    }
    Ok((z, i))
}

#[cfg(test)]
mod tests {
    //! TS2 below: Touchstone File Format Specification, Version 2.0,
    //! ratified by the IBIS Open Forum on 24 April 2009 (it defines version
    //! 1.x files too). Section names are those of its table of contents
    //! (title, date and table of contents checked in a copy of the
    //! specification); what a section says is quoted from memory (the
    //! sections' text not searched).

    use std::collections::HashMap;
    use std::fmt::Write as _;

    use super::*;

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    fn ok(text: &str, ports: Option<usize>) -> Network {
        match parse(text, ports) {
            Ok(n) => n,
            Err(e) => panic!("refused: {e}\n{text}"),
        }
    }

    /// The error is on `line`, its message holds each of `parts`, and its
    /// span lies in the text.
    fn assert_err(
        text: &str,
        ports: Option<usize>,
        line: usize,
        parts: &[&str],
    ) -> TouchstoneError {
        let e = match parse(text, ports) {
            Ok(n) => panic!("accepted: {n:?}\n{text}"),
            Err(e) => e,
        };
        assert_eq!(e.line, line, "{e}");
        for p in parts {
            assert!(e.message.contains(p), "{p:?} is not in: {}", e.message);
        }
        assert!(text.get(e.span.clone()).is_some(), "span {:?}", e.span);
        e
    }

    fn spanned<'t>(text: &'t str, e: &TouchstoneError) -> &'t str {
        &text[e.span.clone()]
    }

    /// S_ij of point k, as the n-port files below encode it.
    fn encoded(k: usize, i: usize, j: usize) -> Complex64 {
        let v = (10_000 * k + 100 * (i + 1) + j + 1) as f64;
        c(v, -v)
    }

    /// A version 1 n-port in RI with S_ij = [`encoded`], laid out as TS2,
    /// "1-port and 2-port Networks", "3-port and 4-port Networks" and
    /// "5-port and Above Networks" say: a 2-port as N11 N21 N12 N22 on one
    /// line, otherwise each matrix row on a new line, at most 4 pairs a
    /// line.
    fn v1_file(n: usize, points: usize) -> String {
        let mut t = String::from("# GHz S RI R 50\n");
        for k in 0..points {
            let _ = write!(t, "{}", k + 1);
            if n == 2 {
                for (i, j) in [(0, 0), (1, 0), (0, 1), (1, 1)] {
                    let v = encoded(k, i, j);
                    let _ = write!(t, " {} {}", v.re, v.im);
                }
                t.push('\n');
                continue;
            }
            for i in 0..n {
                for j in 0..n {
                    if j > 0 && j % 4 == 0 {
                        t.push_str("\n ");
                    }
                    let v = encoded(k, i, j);
                    let _ = write!(t, " {} {}", v.re, v.im);
                }
                t.push('\n');
            }
        }
        t
    }

    fn assert_encoded(net: &Network, points: usize) {
        let n = net.ports;
        assert_eq!(net.s.len(), points);
        for (k, m) in net.s.iter().enumerate() {
            assert_eq!(m.len(), n * n);
            for i in 0..n {
                for j in 0..n {
                    assert_eq!(
                        m[i * n + j],
                        encoded(k, i, j),
                        "point {k}, S{}{}",
                        i + 1,
                        j + 1
                    );
                }
            }
        }
    }

    // TS2, "Introduction" and "[Number of Ports]": a version 1 file's
    // extension is .sNp, N the port count; version 2.0 suggests .ts.
    #[test]
    fn port_count_from_the_file_name() {
        assert_eq!(ports_from_extension("line.s2p"), Some(2));
        assert_eq!(ports_from_extension("LINE.S4P"), Some(4));
        assert_eq!(ports_from_extension("a.s1p"), Some(1));
        assert_eq!(ports_from_extension("dir.v2/board.s12p"), Some(12));
        assert_eq!(ports_from_extension("big.s100p"), Some(100));
        for name in [
            "a.ts",
            "a.s0p",
            "a.s02p",
            "a.sp",
            "a.s2",
            "a.2p",
            "s2p",
            ".s2p",
            "a.s2p.txt",
            "a.s+2p",
            "a.s-2p",
            "a.s99999999999999999999999p",
            "",
        ] {
            assert_eq!(ports_from_extension(name), None, "{name:?}");
        }
    }

    // TS2, "1-port and 2-port Networks": version 1 2-port data is N11 N21
    // N12 N22, the one exception to row-major order.
    #[test]
    fn v1_two_port_order_is_n11_n21_n12_n22() {
        let net = ok("# GHz S RI R 50\n1 11 -11 21 -21 12 -12 22 -22\n", Some(2));
        assert_eq!(net.version, TouchstoneVersion::V1);
        assert_eq!(net.ports, 2);
        // row-major: S11 S12 S21 S22
        assert_eq!(
            net.s,
            vec![vec![c(11., -11.), c(12., -12.), c(21., -21.), c(22., -22.)]]
        );
        assert_eq!(net.reference, vec![50.0, 50.0]);
        assert_encoded(&ok(&v1_file(2, 3), Some(2)), 3);
    }

    // TS2, "3-port and 4-port Networks", "5-port and Above Networks":
    // row-major, each row on a new line, rows wrapping after 4 pairs.
    #[test]
    fn v1_other_port_counts_are_row_major_with_wrapped_rows() {
        for n in [1, 3, 4, 5, 9, 64] {
            let points = if n == 64 { 1 } else { 3 };
            let net = ok(&v1_file(n, points), Some(n));
            assert_eq!(net.ports, n);
            assert_eq!(net.frequencies.len(), points);
            assert_eq!(net.reference, vec![50.0; n]);
            assert_encoded(&net, points);
        }
    }

    // TS2, "[Network Data]": a frequency point may continue over lines;
    // lines break between complex pairs. This reader also takes more than
    // the 4 pairs a line TS2 allows in version 1 (a whole 4-port point on
    // one line).
    #[test]
    fn data_wraps_between_pairs_anywhere() {
        let one_line = ok("# GHz S RI\n1 11 -11 21 -21 12 -12 22 -22\n", Some(2));
        let wrapped = ok("# GHz S RI\n1 11 -11\n 21 -21 12 -12\n\n 22 -22\n", Some(2));
        assert_eq!(one_line, wrapped);
        let mut flat = String::from("# GHz S RI\n1");
        for i in 0..4 {
            for j in 0..4 {
                let v = encoded(0, i, j);
                let _ = write!(flat, " {} {}", v.re, v.im);
            }
        }
        assert_encoded(&ok(&flat, Some(4)), 1);
    }

    // TS2, "[Network Data]", and the rule the IBIS Open Forum's own checker
    // follows (as described on its interconnect list, 2022): a line with an
    // odd number of values starts a frequency point, so a complex pair never
    // breaks over lines.
    #[test]
    fn line_break_inside_a_pair_is_refused() {
        let text = "# GHz S RI\n1 11 -11 21\n -21 12 -12 22 -22\n";
        assert_err(
            text,
            Some(2),
            2,
            &[
                "frequency point 1 (line 2)",
                "expected 9",
                "lines break only between complex pairs",
            ],
        );
    }

    // TS2, "Comment Lines": '!' starts a comment anywhere on a line.
    #[test]
    fn comments_and_blank_lines_anywhere() {
        let text = "! a comment\n\n   ! indented\n# GHz S RI R 50 ! on the option line\n! between\n1 11 -11 ! one pair\n  21 -21 12 -12 22 -22   ! the rest\n\n \t \r\n2 11 -11 21 -21 12 -12 22 -22!no space\r\n! the end";
        let net = ok(text, Some(2));
        assert_eq!(net.frequencies, vec![1e9, 2e9]);
        assert_eq!(
            net.s[1],
            vec![c(11., -11.), c(12., -12.), c(21., -21.), c(22., -22.)]
        );
    }

    // TS2, "GENERAL SYNTAX RULES" (files are case-insensitive) and "Option
    // Line": fields in any order, defaults GHz, S, MA, R 50.
    #[test]
    fn option_line_any_case_any_order_defaults() {
        let a = ok("# mhz s ri r 75\n1 0.5 0\n", Some(1));
        let b = ok("#R 75 RI S MHz\n1 0.5 0\n", Some(1));
        assert_eq!(a, b);
        assert_eq!(a.frequencies, vec![1e6]);
        assert_eq!(a.reference, vec![75.0]);
        // defaults: GHz, MA, 50 ohm
        let d = ok("#\n2 0.5 90\n", Some(1));
        assert_eq!(d.frequencies, vec![2e9]);
        assert_eq!(d.reference, vec![50.0]);
        assert!((d.s[0][0] - c(0.0, 0.5)).norm() <= 1e-15);
        let g = ok("#GhZ\n2 0.5 90\n", Some(1));
        assert_eq!(g, d);
    }

    // TS2, "Option Line": the frequency unit scales every frequency.
    #[test]
    fn frequency_units_scale() {
        for (unit, hz) in [("Hz", 1.5), ("kHz", 1.5e3), ("MHz", 1.5e6), ("GHz", 1.5e9)] {
            let net = ok(&format!("# {unit} S RI\n1.5 0.5 0\n"), Some(1));
            assert_eq!(net.frequencies, vec![hz], "{unit}");
        }
    }

    // TS2, "Option Line": RI is real and imaginary, MA magnitude and angle
    // in degrees, DB 20 log10|S| and angle in degrees.
    #[test]
    fn ri_ma_db_convert_exactly() {
        let one = |format: &str, a: &str, b: &str| {
            ok(&format!("# GHz S {format}\n1 {a} {b}\n"), Some(1)).s[0][0]
        };
        assert_eq!(one("RI", "0.25", "-0.75"), c(0.25, -0.75));
        assert!((one("MA", "0.5", "90") - c(0.0, 0.5)).norm() <= 1e-15);
        assert!((one("MA", "1", "180") - c(-1.0, 0.0)).norm() <= 1e-15);
        assert!((one("MA", "2", "-90") - c(0.0, -2.0)).norm() <= 1e-15);
        assert!((one("MA", "1", "-270") - c(0.0, 1.0)).norm() <= 1e-15);
        assert!((one("MA", "1", "720") - c(1.0, 0.0)).norm() <= 1e-15);
        let h = std::f64::consts::FRAC_1_SQRT_2;
        assert!((one("MA", "1", "45") - c(h, h)).norm() <= 1e-15);
        assert!((one("MA", "1", "-135") - c(-h, -h)).norm() <= 1e-15);
        // 20 log10(0.5) = -6.020599913279624
        assert!((one("DB", "-6.020599913279624", "0") - c(0.5, 0.0)).norm() <= 1e-15);
        assert!((one("DB", "-6.0206", "0") - c(0.5, 0.0)).norm() <= 1e-5);
        assert!((one("DB", "0", "45") - c(h, h)).norm() <= 1e-15);
        assert!((one("DB", "20", "-90") - c(0.0, -10.0)).norm() <= 1e-14);
        assert_eq!(one("MA", "0", "123"), c(0.0, 0.0));
    }

    // TS2, "[Network Data]": frequencies rise; 0 (DC) is a frequency.
    #[test]
    fn a_dc_point_is_allowed() {
        let net = ok("# Hz S RI\n-0 1 0\n1 0.5 0\n", Some(1));
        assert_eq!(net.frequencies, vec![0.0, 1.0]);
        assert!(net.frequencies[0].is_sign_positive());
        let net = ok("# Hz S RI\n0 1 0\n1 0.5 0\n", Some(1));
        assert_eq!(net.frequencies, vec![0.0, 1.0]);
    }

    // no source: a file without an option line or data holds no network
    #[test]
    fn empty_files_are_refused() {
        assert_err("", Some(2), 1, &["empty file"]);
        assert_err(" \n\t\n", Some(2), 1, &["empty file"]);
        assert_err("! only\n! comments\n", Some(2), 1, &["only comments"]);
        assert_err(
            "# GHz S RI\n! no data\n",
            Some(2),
            1,
            &["no network data after the option line"],
        );
    }

    // TS2, "Option Line": the option line comes before the data.
    #[test]
    fn data_before_the_option_line_is_refused() {
        let text = "! c\n1 0.5 0\n# GHz S RI\n";
        assert_err(text, Some(1), 2, &["data before the option line"]);
    }

    // TS2, "Option Line": units Hz kHz MHz GHz, parameters S Y Z G H,
    // formats DB MA RI, R and a value; only one option line.
    #[test]
    fn wrong_option_lines_are_refused() {
        let text = "# GHz S RI R 50 foo\n1 0.5 0\n";
        let e = assert_err(
            text,
            Some(1),
            1,
            &["unknown option 'foo' in the option line"],
        );
        assert_eq!(spanned(text, &e), "foo");
        for (p, name) in [
            ("Y", "Y parameters (admittance)"),
            ("z", "Z parameters (impedance)"),
            ("G", "G parameters (hybrid-g)"),
            ("h", "H parameters (hybrid-h)"),
        ] {
            let text = format!("! c\n# GHz {p} RI R 50\n1 0.5 0\n");
            let e = assert_err(&text, Some(1), 2, &[name, "only S parameters are read"]);
            assert_eq!(spanned(&text, &e), p);
        }
        assert_err(
            "# GHz MHz\n1 0.5 0\n",
            Some(1),
            1,
            &["gives the frequency unit twice ('GHz' and 'MHz')"],
        );
        assert_err(
            "# RI MA\n1 0.5 0\n",
            Some(1),
            1,
            &["gives the data format twice"],
        );
        assert_err(
            "# S s\n1 0.5 0\n",
            Some(1),
            1,
            &["gives the parameter twice"],
        );
        assert_err(
            "# R 50 R 75\n1 0.5 0\n",
            Some(1),
            1,
            &["gives the reference impedance twice"],
        );
        assert_err(
            "# GHz S RI R\n1 0.5 0\n",
            Some(1),
            1,
            &["R in the option line needs the reference impedance"],
        );
        let text = "# GHz S RI R -50\n1 0.5 0\n";
        let e = assert_err(
            text,
            Some(1),
            1,
            &["reference impedance '-50' is not positive"],
        );
        assert_eq!(spanned(text, &e), "-50");
        assert_err(
            "# GHz S RI R 0\n1 0.5 0\n",
            Some(1),
            1,
            &["is not positive"],
        );
        assert_err(
            "# GHz S RI R fifty\n1 0.5 0\n",
            Some(1),
            1,
            &["'fifty' is not a number"],
        );
        assert_err(
            "# GHz S RI\n1 0.5 0\n# MHz S RI\n2 0.5 0\n",
            Some(1),
            3,
            &["a second option line (the first is on line 1)"],
        );
    }

    // TS2, "[Number of Ports]": version 1 files have no such keyword, so
    // the count comes from the file name; refusing 0 and more than 64 is
    // this reader's limit (no source).
    #[test]
    fn v1_needs_a_port_count_within_the_limit() {
        let text = "# GHz S RI\n1 0.5 0\n";
        assert_err(text, None, 1, &["does not state its port count"]);
        assert_err(text, Some(0), 1, &["0 ports expected"]);
        assert_err(
            text,
            Some(65),
            1,
            &["65 ports expected", "more than 64 are refused"],
        );
    }

    // TS2, "[Network Data]": each point holds the frequency and n*n pairs.
    #[test]
    fn truncated_and_short_points_say_expected_and_found() {
        // truncated at the end
        let text = "# GHz S RI\n1 11 -11 21 -21 12 -12 22 -22\n2 11 -11 21 -21 12\n";
        assert_err(
            text,
            Some(2),
            3,
            &["frequency point 2 (line 3) holds 6 values, expected 9"],
        );
        let text = "# GHz S RI\n1 11 -11 21 -21 12 -12 22 -22\n2 11 -11 21\n";
        assert_err(
            text,
            Some(2),
            3,
            &["frequency point 2 (line 3) holds 4 values, expected 9"],
        );
        // a value missing in the middle
        let text = "# GHz S RI\n1 11 -11 21 -21 12 -12 22 -22\n2 11 -11 21 -21 12 -12 22\n3 11 -11 21 -21 12 -12 22 -22\n";
        assert_err(
            text,
            Some(2),
            3,
            &["frequency point 2 (line 3) holds 8 values, expected 9"],
        );
        // a value too many
        let text = "# GHz S RI\n1 11 -11 21 -21 12 -12 22 -22 0\n";
        assert_err(text, Some(2), 2, &["holds 10 values, expected 9"]);
        // a 3-port row too short: the next row (odd count) ends the point
        let text = "# GHz S RI\n1 1 1 1 1 1 1\n 1 1 1 1 1 1\n 1 1 1 1 1\n";
        assert_err(text, Some(3), 2, &["holds 13 values, expected 19"]);
        // truncated inside a version 2.0 point: [End] ends the data
        let text = "[Version] 2.0\n# GHz S RI\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data]\n1 0.5\n[End]\n";
        assert_err(text, None, 6, &["holds 2 values, expected 3"]);
    }

    // no source (the check of a port count a version 1 file cannot state):
    // a point's line structure that fits another port count is named.
    #[test]
    fn port_count_other_than_the_name_says_is_named() {
        let four = v1_file(4, 2);
        assert_err(
            &four,
            Some(2),
            2,
            &[
                "holds 33 values, expected 9",
                "33 values make a 4-port point",
                "comes from its name",
            ],
        );
        let one = "# GHz S RI\n1 0.5 0\n2 0.5 0\n3 0.5 0\n";
        assert_err(
            one,
            Some(2),
            2,
            &["holds 3 values, expected 9", "make a 1-port point"],
        );
        let two = v1_file(2, 2);
        assert_err(
            &two,
            Some(4),
            2,
            &["holds 9 values, expected 33", "make a 2-port point"],
        );
    }

    // TS2, "[Network Data]": frequencies increase strictly.
    #[test]
    fn frequencies_must_rise() {
        let text = "# GHz S RI\n1 0.5 0\n2 0.5 0\n1.5 0.5 0\n";
        let e = assert_err(
            text,
            Some(1),
            4,
            &[
                "frequency '1.5' GHz (line 4) is below the previous point's '2' GHz (line 3)",
                "increase strictly",
            ],
        );
        assert_eq!(spanned(text, &e), "1.5");
        let text = "# GHz S RI\n1 0.5 0\n1.0 0.5 0\n";
        assert_err(text, Some(1), 3, &["repeats the previous point's '1' GHz"]);
        // in a 2-port a falling frequency would start noise data: say why it does not
        let text = "# GHz S RI\n1 1 0 1 0 1 0 1 0\n1 1 0 1 0 1 0 1 0\n";
        assert_err(
            text,
            Some(2),
            3,
            &[
                "repeats",
                "noise parameters, rows of 5 values, but this line holds 9",
            ],
        );
        // version 2.0 too
        let text = "[Version] 2.0\n# GHz S RI\n[Number of Ports] 1\n[Number of Frequencies] 2\n[Network Data]\n2 0.5 0\n1 0.5 0\n[End]\n";
        assert_err(text, Some(1), 7, &["is below the previous point's"]);
    }

    // TS2, "[Network Data]" (frequencies are not negative) and this
    // reader's rule that every value is a finite number.
    #[test]
    fn bad_numbers_are_refused_at_their_token() {
        for (bad, what) in [
            ("nan", "is not a finite number"),
            ("NaN", "is not a finite number"),
            ("inf", "is not a finite number"),
            ("-infinity", "is not a finite number"),
            ("1e999", "is not a finite number"),
            ("abc", "is not a number"),
            ("0x10", "is not a number"),
            ("1,5", "is not a number"),
            ("1.5.2", "is not a number"),
        ] {
            for (k, text) in [
                format!("# GHz S RI\n1 0.5 0\n2 {bad} 0\n"),
                format!("# GHz S RI\n1 0.5 0\n2 0.5 {bad}\n"),
                format!("# GHz S RI\n1 0.5 0\n{bad} 0.5 0\n"),
            ]
            .iter()
            .enumerate()
            {
                let e = assert_err(text, Some(1), 3, &[what]);
                assert_eq!(spanned(text, &e), bad, "case {k}");
            }
        }
        let text = "# GHz S RI\n-1 0.5 0\n";
        let e = assert_err(text, Some(1), 2, &["frequency '-1' GHz is negative"]);
        assert_eq!(spanned(text, &e), "-1");
        assert_err(
            "# GHz S RI\n1e300 0.5 0\n",
            Some(1),
            2,
            &["frequency '1e300' GHz is too large"],
        );
        let text = "# GHz S MA\n1 -0.5 0\n";
        let e = assert_err(text, Some(1), 2, &["magnitude '-0.5' is negative"]);
        assert_eq!(spanned(text, &e), "-0.5");
        assert_err(
            "# GHz S DB\n1 7000 0\n",
            Some(1),
            2,
            &["dB magnitude '7000' is too large"],
        );
        // scikit-rf writes -inf dB for an exact 0; it is not a finite number
        assert_err(
            "# GHz S DB\n1 -inf 0\n",
            Some(1),
            2,
            &["'-inf' is not a finite number"],
        );
    }

    // TS2, "GENERAL SYNTAX RULES AND GUIDELINES" (rule 2, read in a stored
    // copy): a line ends with CR or CR LF; LF alone is what most files use.
    #[test]
    fn lines_end_at_lf_cr_lf_or_a_lone_cr() {
        let lf = ok("# GHz S RI\n1 0.5 0\n2 0.5 0\n", Some(1));
        assert_eq!(ok("# GHz S RI\r\n1 0.5 0\r\n2 0.5 0\r\n", Some(1)), lf);
        assert_eq!(ok("# GHz S RI\r1 0.5 0\r2 0.5 0\r", Some(1)), lf);
        assert_eq!(ok("# GHz S RI\r\n1 0.5 0\r2 0.5 0", Some(1)), lf);
        // line numbers count each line end once
        let text = "# GHz S RI\r\n1 0.5 0\r\r2 0.5 0\r\n1 0.5 0\n";
        let e = assert_err(
            text,
            Some(1),
            5,
            &["is below the previous point's '2' GHz (line 4)"],
        );
        assert_eq!(e.span, 30..31);
        // a byte-order mark is skipped
        assert_eq!(ok("\u{feff}# GHz S RI\n1 0.5 0\n2 0.5 0\n", Some(1)), lf);
    }

    // TS2, "[Version]": a version 2.0 file starts with [Version] 2.0; a
    // version 1 file has no keywords.
    #[test]
    fn keywords_and_versions_in_the_wrong_place() {
        assert_err(
            "[Number of Ports] 1\n",
            None,
            1,
            &["[Number of Ports] comes before [Version]"],
        );
        assert_err(
            "# GHz S RI\n[Version] 2.0\n1 0.5 0\n",
            Some(1),
            2,
            &["[Version] in a version 1 file"],
        );
        assert_err(
            "# GHz S RI\n1 0.5 0\n[End]\n",
            Some(1),
            3,
            &["[End] in a version 1 file"],
        );
        let e = assert_err(
            "[Version] 2.1\n",
            None,
            1,
            &["Touchstone version '2.1' is not read"],
        );
        assert_eq!(e.span, 10..13);
        assert_err(
            "[Version] two\n",
            None,
            1,
            &["[Version] needs a version number"],
        );
        assert_err("[Version]\n", None, 1, &["[Version] needs a value"]);
        assert_err(
            "[Version] 2.0 extra\n",
            None,
            1,
            &["[Version] takes one value; 'extra' is extra"],
        );
        assert_err("[Version 2.0\n", None, 1, &["'[' has no closing ']'"]);
    }

    /// A version 2.0 file with `header` lines after [Version] and the
    /// option line, then `data` after [Network Data], then [End].
    fn v2(header: &str, data: &str) -> String {
        format!("! a version 2.0 file\n[Version] 2.0\n# GHz S RI R 50\n{header}[Network Data]\n{data}[End]\n")
    }

    // TS2, "[Two-Port Data Order]": 12_21 is N11 N12 N21 N22, 21_12 is
    // N11 N21 N12 N22; required in a 2-port file.
    #[test]
    fn v2_two_port_data_order() {
        let data = "1 11 -11 12 -12 21 -21 22 -22\n";
        let a = ok(
            &v2(
                "[Number of Ports] 2\n[Two-Port Data Order] 12_21\n[Number of Frequencies] 1\n",
                data,
            ),
            Some(2),
        );
        assert_eq!(a.version, TouchstoneVersion::V2);
        assert_eq!(
            a.s[0],
            vec![c(11., -11.), c(12., -12.), c(21., -21.), c(22., -22.)]
        );
        let b = ok(
            &v2(
                "[Number of Ports] 2\n[Two-Port Data Order] 21_12\n[Number of Frequencies] 1\n",
                data,
            ),
            None,
        );
        assert_eq!(
            b.s[0],
            vec![c(11., -11.), c(21., -21.), c(12., -12.), c(22., -22.)]
        );
        let text = v2("[Number of Ports] 2\n[Number of Frequencies] 1\n", data);
        assert_err(
            &text,
            None,
            6,
            &["[Two-Port Data Order] (12_21 or 21_12) is required in a 2-port file"],
        );
        let text = v2(
            "[Number of Ports] 1\n[Two-Port Data Order] 12_21\n[Number of Frequencies] 1\n",
            "1 0.5 0\n",
        );
        assert_err(
            &text,
            None,
            5,
            &["[Two-Port Data Order] is for 2-port files; this one has 1 ports"],
        );
        let text = v2(
            "[Number of Ports] 2\n[Two-Port Data Order] 12-21\n[Number of Frequencies] 1\n",
            data,
        );
        assert_err(&text, None, 5, &["is 12_21 or 21_12, not '12-21'"]);
    }

    // TS2, "[Matrix Format]": Lower lists each row up to the diagonal,
    // Upper from it; the other half mirrors it.
    #[test]
    fn v2_lower_and_upper_matrices_fill_the_mirror() {
        let header = |f: &str| {
            format!("[Number of Ports] 3\n[Number of Frequencies] 1\n[Matrix Format] {f}\n")
        };
        let lower = ok(
            &v2(
                &header("Lower"),
                "1 11 -1\n 21 -2 22 -3\n 31 -4 32 -5 33 -6\n",
            ),
            Some(3),
        );
        let want = vec![
            c(11., -1.),
            c(21., -2.),
            c(31., -4.),
            c(21., -2.),
            c(22., -3.),
            c(32., -5.),
            c(31., -4.),
            c(32., -5.),
            c(33., -6.),
        ];
        assert_eq!(lower.s[0], want);
        let upper = ok(
            &v2(
                &header("upper"),
                "1 11 -1 21 -2 31 -4\n 22 -3 32 -5\n 33 -6\n",
            ),
            Some(3),
        );
        assert_eq!(upper.s[0], want);
        let full = ok(
            &v2(
                &header("FULL"),
                "1 11 -1 21 -2 31 -4\n 21 -2 22 -3 32 -5\n 31 -4 32 -5 33 -6\n",
            ),
            Some(3),
        );
        assert_eq!(full.s[0], want);
        // a Lower point is 1 + 2*6 values
        assert_err(
            &v2(&header("Lower"), "1 11 -1 21 -2 22 -3\n"),
            Some(3),
            8,
            &["holds 7 values, expected 13", "triangle"],
        );
        assert_err(
            &v2(&header("Diagonal"), "1 1 0\n"),
            Some(3),
            6,
            &["is Full, Lower or Upper, not 'Diagonal'"],
        );
    }

    // TS2, "[Reference]": one impedance per port, possibly over several
    // lines; without it every port has the option line's R.
    #[test]
    fn v2_reference_per_port() {
        let net = ok(
            &v2("[Number of Ports] 4\n[Reference] 50 75\n 25.5\n   100 ! ohm\n[Number of Frequencies] 1\n", &v1_file(4, 1)[16..]),
            Some(4),
        );
        assert_eq!(net.reference, vec![50.0, 75.0, 25.5, 100.0]);
        assert_encoded(&net, 1);
        let text = "[Version] 2.0\n# GHz S RI R 42\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data]\n1 0.5 0\n[End]\n";
        assert_eq!(ok(text, None).reference, vec![42.0]);
        let short = v2(
            "[Number of Ports] 3\n[Reference] 50 50\n[Number of Frequencies] 1\n",
            "",
        );
        assert_err(
            &short,
            None,
            5,
            &["[Reference] lists 2 impedances for 3 ports"],
        );
        let long = v2("[Number of Ports] 1\n[Reference] 50 50\n", "");
        assert_err(
            &long,
            None,
            5,
            &["[Reference] lists more than 1 impedances for 1 ports"],
        );
        let early = v2("[Reference] 50\n[Number of Ports] 1\n", "");
        assert_err(
            &early,
            None,
            4,
            &["[Reference] comes before [Number of Ports]"],
        );
        let zero = v2("[Number of Ports] 2\n[Reference] 50 0\n", "");
        assert_err(&zero, None, 5, &["reference impedance '0' is not positive"]);
    }

    // TS2, "[Number of Ports]", "[Number of Frequencies]": the data must
    // hold that many ports and frequencies.
    #[test]
    fn v2_counts_must_match() {
        let e = assert_err(
            &v2("[Number of Ports] 4\n[Number of Frequencies] 1\n", ""),
            Some(2),
            4,
            &["[Number of Ports] is 4 but 2 ports were expected (from the file name)"],
        );
        assert!(e.message.contains("from the file name"));
        let text = v2(
            "[Number of Ports] 1\n[Number of Frequencies] 3\n",
            "1 0.5 0\n2 0.5 0\n",
        );
        assert_err(&text, None, 9, &["[Number of Frequencies] is 3 (line 5) but the network data holds 2 frequency points"]);
        let text = v2(
            "[Number of Ports] 1\n[Number of Frequencies] 1\n",
            "1 0.5 0\n2 0.5 0\n",
        );
        let e = assert_err(&text, None, 8, &["more network data than [Number of Frequencies] 1 (line 5) declares: frequency point 2 starts here"]);
        assert_eq!(spanned(&text, &e), "2");
        assert_err(
            &v2("[Number of Ports] 0\n", ""),
            None,
            4,
            &["[Number of Ports] must be at least 1"],
        );
        assert_err(
            &v2("[Number of Ports] four\n", ""),
            None,
            4,
            &["needs a whole number, found 'four'"],
        );
        assert_err(
            &v2("[Number of Ports] 1\n[Number of Frequencies] 2.0\n", ""),
            None,
            5,
            &["needs a whole number"],
        );
    }

    // no source: this reader's limits, 64 ports and 1,000,000 frequencies
    #[test]
    fn limits_are_errors_not_allocations() {
        assert_err(
            &v2("[Number of Ports] 65\n", ""),
            None,
            4,
            &["[Number of Ports] '65': more than 64 ports are refused"],
        );
        assert_err(
            &v2("[Number of Ports] 99999999999999999999999\n", ""),
            None,
            4,
            &["more than 64 ports are refused"],
        );
        assert_err(
            &v2("[Number of Ports] 1\n[Number of Frequencies] 1000001\n", ""),
            None,
            5,
            &["more than 1000000 frequency points are refused"],
        );
        assert_err(
            &v2(
                "[Number of Ports] 2\n[Number of Noise Frequencies] 1000001\n",
                "",
            ),
            None,
            5,
            &["more than 1000000 noise frequencies are refused"],
        );
    }

    // no source: this reader's limit of 1,000,000 frequency points, met at
    // the first point too many (version 1 files declare no count).
    #[test]
    fn more_than_a_million_points_are_refused() {
        let mut text = String::with_capacity(16 * (MAX_FREQUENCIES + 2));
        text.push_str("# Hz S RI\n");
        for k in 0..MAX_FREQUENCIES {
            let _ = writeln!(text, "{k} 0 0");
        }
        let at_limit = text.len();
        let _ = writeln!(text, "{MAX_FREQUENCIES} 0 0");
        let e = assert_err(
            &text,
            Some(1),
            MAX_FREQUENCIES + 2,
            &["more than 1000000 frequency points"],
        );
        assert_eq!(spanned(&text, &e), "1000000");
        assert_eq!(
            ok(&text[..at_limit], Some(1)).frequencies.len(),
            MAX_FREQUENCIES
        );
    }

    // TS2: the keyword list ([Version] ... [End]); [Mixed-Mode Order] is a
    // TS2 keyword this reader does not support.
    #[test]
    fn v2_keywords_unknown_repeated_missing_or_refused() {
        let base = "[Number of Ports] 1\n[Number of Frequencies] 1\n";
        let text = v2(&format!("{base}[Frobnicate] 3\n"), "1 0.5 0\n");
        assert_err(&text, None, 6, &["unknown keyword [Frobnicate]"]);
        let text = v2(
            &format!("{base}[Mixed-Mode Order] D2,1 C2,1\n"),
            "1 0.5 0\n",
        );
        assert_err(
            &text,
            None,
            6,
            &["[Mixed-Mode Order]: mixed-mode data is not supported"],
        );
        let text = v2(&format!("{base}[number   of PORTS] 1\n"), "1 0.5 0\n");
        assert_err(
            &text,
            None,
            6,
            &["[number   of PORTS] appears twice (lines 4 and 6)"],
        );
        let text = v2(&format!("{base}[Version] 2.0\n"), "1 0.5 0\n");
        assert_err(&text, None, 6, &["[Version] appears twice (lines 2 and 6)"]);
        let text = "[Version] 2.0\n# GHz S RI\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data]\n1 0.5 0\n";
        assert_err(text, None, 6, &["the file ends without [End]"]);
        let text = format!("{}1 0.5 0\n", v2(base, "1 0.5 0\n"));
        assert_err(&text, None, 9, &["text after [End]"]);
        let text = v2("[Number of Ports] 1\n", "1 0.5 0\n");
        assert_err(
            &text,
            None,
            5,
            &["[Number of Frequencies] is missing before [Network Data]"],
        );
        let text = v2("[Number of Frequencies] 1\n", "1 0.5 0\n");
        assert_err(
            &text,
            None,
            5,
            &["[Number of Ports] is missing before [Network Data]"],
        );
        let text = "[Version] 2.0\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data]\n1 0.5 0\n[End]\n";
        assert_err(text, None, 4, &["no option line"]);
        let text = "[Version] 2.0\n# GHz S RI\n[Number of Ports] 1\n[Number of Frequencies] 1\n";
        assert_err(text, None, 4, &["the file ends without [Network Data]"]);
        let text = v2(&format!("{base}1 0.5 0\n"), "1 0.5 0\n");
        assert_err(&text, None, 6, &["'1' before [Network Data]"]);
        let text = v2(base, "1 0.5 0\n[Number of Ports] 1\n");
        assert_err(
            &text,
            None,
            8,
            &["[Number of Ports] after the network data"],
        );
        let text = v2(&format!("{base}[End]\n"), "");
        assert_err(&text, None, 6, &["[End] comes before [Network Data]"]);
        let text = v2(base, "1 0.5 0\n# GHz S RI\n");
        assert_err(
            &text,
            None,
            8,
            &["a second option line (the first is on line 3)"],
        );
        let text = "[Version] 2.0\n# GHz S RI\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data] 1 0.5 0\n[End]\n";
        assert_err(
            text,
            None,
            5,
            &["[Network Data] takes no value on its line; '1' is extra"],
        );
        let text = v2(
            &format!(
                "{base}[Begin Information]\n[Anything] at all\nfree text 1 2\n[End Information]\n"
            ),
            "1 0.5 0\n",
        );
        assert_eq!(ok(&text, None).frequencies, vec![1e9]);
        let text = v2(&format!("{base}[Begin Information]\n"), "1 0.5 0\n");
        assert_err(&text, None, 6, &["[Begin Information] is never closed"]);
        let text = v2(&format!("{base}[End Information]\n"), "1 0.5 0\n");
        assert_err(
            &text,
            None,
            6,
            &["[End Information] without [Begin Information]"],
        );
        let text = v2(
            "[Number of Ports] 1\n[Number of Frequencies] 1\n",
            "1 0.5 0\n",
        )
        .replace("# GHz S RI R 50", "# GHz Z RI R 50");
        assert_err(&text, None, 3, &["Z parameters (impedance)"]);
    }

    // TS2, "[Noise Data]", "Noise Parameter Data", "[Number of Noise
    // Frequencies]": 2-port noise rows of 5 values after the network data.
    #[test]
    fn v2_noise_data_is_counted_and_skipped() {
        let header = |k: usize| {
            format!("[Number of Ports] 2\n[Two-Port Data Order] 21_12\n[Number of Frequencies] 2\n[Number of Noise Frequencies] {k}\n")
        };
        let data = "1 11 -11 21 -21 12 -12 22 -22\n2 11 -11 21 -21 12 -12 22 -22\n[Noise Data]\n1 0.5 0.3 45 0.2\n2 0.6 0.35 50 0.25\n";
        let net = ok(&v2(&header(2), data), Some(2));
        assert_eq!(net.frequencies, vec![1e9, 2e9]);
        assert_eq!(net.s[1][2], c(21., -21.));
        assert_err(
            &v2(&header(3), data),
            Some(2),
            14,
            &["[Number of Noise Frequencies] is 3 (line 7) but [Noise Data] holds 2 rows"],
        );
        assert_err(&v2(&header(1), data), Some(2), 13, &["more noise data than [Number of Noise Frequencies] 1 (line 7) declares: row 2 starts here"]);
        let no_noise = "1 11 -11 21 -21 12 -12 22 -22\n2 11 -11 21 -21 12 -12 22 -22\n";
        assert_err(
            &v2(&header(2), no_noise),
            Some(2),
            11,
            &["is 2 (line 7) but the file has no [Noise Data]"],
        );
        let no_count = v2(
            "[Number of Ports] 2\n[Two-Port Data Order] 21_12\n[Number of Frequencies] 2\n",
            data,
        );
        assert_err(
            &no_count,
            Some(2),
            10,
            &["[Noise Data] without [Number of Noise Frequencies]"],
        );
        let short_row = data.replace("2 0.6 0.35 50 0.25", "2 0.6 0.35 50");
        assert_err(
            &v2(&header(2), &short_row),
            Some(2),
            13,
            &["noise parameters are rows of 5 values", "line 13 holds 4"],
        );
        let falling = data.replace("2 0.6 0.35 50 0.25", "0.5 0.6 0.35 50 0.25");
        assert_err(
            &v2(&header(2), &falling),
            Some(2),
            13,
            &["noise frequency '0.5' GHz (line 13) is not above the previous row's '1' GHz"],
        );
        let one_port = v2(
            "[Number of Ports] 1\n[Number of Frequencies] 1\n[Number of Noise Frequencies] 1\n",
            "1 0.5 0\n[Noise Data]\n1 0.5 0.3 45 0.2\n",
        );
        assert_err(
            &one_port,
            None,
            9,
            &["noise parameters are defined for 2-port networks; this one has 1 ports"],
        );
    }

    // TS2, "Noise Parameter Data": in a version 1 2-port file, noise rows
    // follow the network data, the first at a frequency not above the last
    // network frequency.
    #[test]
    fn v1_noise_data_is_skipped() {
        let text = "# GHz S MA R 50\n1 0.1 0 0.9 -10 0.1 -10 0.2 0\n2 0.1 0 0.9 -20 0.1 -20 0.2 0\n! noise\n1 0.5 0.3 45 0.2\n2 0.6 0.35 50 0.25\n";
        let net = ok(text, Some(2));
        assert_eq!(net.frequencies, vec![1e9, 2e9]);
        let bad = text.replace("2 0.6 0.35 50 0.25", "2 0.6 0.35 50");
        assert_err(
            &bad,
            Some(2),
            6,
            &[
                "rows of 5 values",
                "noise parameters start where the frequency falls, here on line 5",
            ],
        );
        let falling = text.replace("2 0.6 0.35 50 0.25", "0.5 0.6 0.35 50 0.25");
        assert_err(
            &falling,
            Some(2),
            6,
            &["noise frequency '0.5' GHz (line 6) is not above"],
        );
        // a 1-port has no noise data: a falling frequency is an error,
        // whatever its line holds
        let one = "# GHz S MA\n1 0.1 0\n2 0.1 0\n1 0.5 0.3 45 0.2\n";
        let e = assert_err(one, Some(1), 4, &["is below the previous point's"]);
        assert!(!e.message.contains("noise"), "{}", e.message);
    }

    // no source: this reader's message form
    #[test]
    fn error_display_names_the_line() {
        let e = parse("# GHz S RI\n-1 0.5 0\n", Some(1)).unwrap_err();
        assert_eq!(e.to_string(), "line 2: frequency '-1' GHz is negative");
        // long or control-character tokens are cut and escaped in messages
        let text = format!("# GHz S RI\n1 0.5 {}\u{7}\n", "9".repeat(100));
        let e = parse(&text, Some(1)).unwrap_err();
        assert!(
            e.message.contains("'99999999999999999999999999999999…'"),
            "{}",
            e.message
        );
        let e = parse("# GHz S RI\n1 0.5 x\u{7}\n", Some(1)).unwrap_err();
        assert!(e.message.contains("'x\\u{7}'"), "{}", e.message);
    }

    // scikit-rf 2.2.0 wrote these files and read the TSV's values back
    // from them (tests/reference/gen_touchstone_reference.py).
    #[test]
    fn files_written_by_scikit_rf_read_as_scikit_rf_reads_them() {
        let root = env!("CARGO_MANIFEST_DIR");
        let dir = format!("{root}/tests/reference/touchstone");
        let tsv =
            std::fs::read_to_string(format!("{root}/tests/reference/touchstone_reference.tsv"))
                .expect("the reference table is committed");
        let mut rows = tsv.lines();
        assert!(rows
            .next()
            .is_some_and(|l| l.starts_with("# reference library: scikit-rf ")));
        assert_eq!(
            rows.next(),
            Some("file\tports\tpoints\twhat\tfreq_hz\ti\tj\tre\tim")
        );
        let mut nets: HashMap<String, Network> = HashMap::new();
        let mut checked = 0;
        for row in rows {
            let f: Vec<&str> = row.split('\t').collect();
            assert_eq!(f.len(), 9, "{row}");
            let name = f[0];
            let net = nets.entry(name.to_string()).or_insert_with(|| {
                let text =
                    std::fs::read_to_string(format!("{dir}/{name}")).expect("committed file");
                match parse(&text, ports_from_extension(name)) {
                    Ok(n) => n,
                    Err(e) => panic!("{name}: {e}"),
                }
            });
            let num = |s: &str| -> f64 { s.parse().expect("a number in the table") };
            let n = net.ports;
            assert_eq!(n, num(f[1]) as usize, "{name}");
            assert_eq!(net.frequencies.len(), num(f[2]) as usize, "{name}");
            assert_eq!(
                net.version == TouchstoneVersion::V2,
                name.ends_with(".ts"),
                "{name}"
            );
            let hz = num(f[4]);
            let k = net
                .frequencies
                .iter()
                .position(|&x| (x - hz).abs() <= 1e-12 * hz)
                .unwrap_or_else(|| panic!("{name}: no point at {hz} Hz"));
            let (i, j) = (num(f[5]) as usize - 1, num(f[6]) as usize - 1);
            let want = c(num(f[7]), num(f[8]));
            match f[3] {
                "s" => {
                    let got = net.s[k][i * n + j];
                    assert!(
                        (got - want).norm() <= 1e-9 * want.norm() + 1e-15,
                        "{name} at {hz} Hz, S{}{}: {got} against scikit-rf's {want}",
                        i + 1,
                        j + 1
                    );
                }
                "z0" => assert_eq!(c(net.reference[i], 0.0), want, "{name}, port {}", i + 1),
                other => panic!("unknown row kind {other}"),
            }
            checked += 1;
        }
        assert!(checked >= 300, "{checked} checkpoints");
        // every committed file is in the table
        let mut files: Vec<String> = std::fs::read_dir(&dir)
            .expect("the reference files are committed")
            .filter_map(|e| e.ok()?.file_name().into_string().ok())
            .collect();
        files.sort();
        let mut read: Vec<String> = nets.keys().cloned().collect();
        read.sort();
        assert_eq!(files, read);
        assert!(files.len() >= 10);
    }

    /// A tiny deterministic generator (xorshift64, Marsaglia 2003).
    struct XorShift(u64);

    impl XorShift {
        fn next(&mut self) -> u64 {
            let mut x = self.0;
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            self.0 = x;
            x
        }

        fn below(&mut self, n: usize) -> usize {
            (self.next() % n.max(1) as u64) as usize
        }
    }

    /// What holds for any input: an error's line and span lie in the text;
    /// an accepted network is whole (n*n finite values at each of its
    /// strictly rising, finite, non-negative frequencies; n positive
    /// references). Returns whether it was accepted.
    fn check_any(text: &str, ports: Option<usize>) -> bool {
        match parse(text, ports) {
            Ok(net) => {
                let n = net.ports;
                assert!((1..=MAX_PORTS).contains(&n));
                assert!(!net.frequencies.is_empty());
                assert_eq!(net.s.len(), net.frequencies.len());
                assert!(net.frequencies.windows(2).all(|w| w[0] < w[1]));
                assert!(net.frequencies.iter().all(|f| f.is_finite() && *f >= 0.0));
                assert!(net
                    .s
                    .iter()
                    .all(|m| m.len() == n * n && m.iter().all(|v| v.is_finite())));
                assert_eq!(net.reference.len(), n);
                assert!(net.reference.iter().all(|z| z.is_finite() && *z > 0.0));
                true
            }
            Err(e) => {
                assert!(
                    e.line >= 1 && e.line <= text.matches(['\n', '\r']).count() + 1,
                    "{e}"
                );
                assert!(text.get(e.span.clone()).is_some(), "{e}: span {:?}", e.span);
                assert!(!e.message.is_empty());
                false
            }
        }
    }

    // no source: the reader must not panic on any input
    #[test]
    fn random_and_mutated_input_never_panics() {
        let v2_full = v2(
            "[Number of Ports] 3\n[Reference] 50 75\n 60\n[Number of Frequencies] 2\n[Matrix Format] Lower\n[Begin Information]\nx\n[End Information]\n",
            "1 11 -1\n 21 -2 22 -3\n 31 -4 32 -5 33 -6\n2 11 -1\n 21 -2 22 -3\n 31 -4 32 -5 33 -6\n",
        );
        let v2_noise = v2(
            "[Number of Ports] 2\n[Two-Port Data Order] 12_21\n[Number of Frequencies] 1\n[Number of Noise Frequencies] 1\n",
            "1 11 -11 21 -21 12 -12 22 -22\n[Noise Data]\n1 0.5 0.3 45 0.2\n",
        );
        let seeds: Vec<(String, Option<usize>)> = vec![
            (v1_file(2, 3), Some(2)),
            (v1_file(5, 2), Some(5)),
            (
                "# mhz s ma r 75\n1 0.5 90\n2 0.4 -90\n".to_string(),
                Some(1),
            ),
            (
                "# GHz S DB\n1 -3 45 -1 0 -1 0 -3 45\n2 -3 45 -1 0 -1 0 -3 45\n1 0.5 0.3 45 0.2\n"
                    .to_string(),
                Some(2),
            ),
            (v2_full, Some(3)),
            (v2_noise, None),
        ];
        const ALPHABET: &[u8] = b"0123456789.-+eE \t\n\r!#[]_GgHhKkMmSsRrIiAaDdBbYZ";
        const WORDS: &[&str] = &[
            "[End]",
            "[Network Data]",
            "[Noise Data]",
            "# GHz S RI R 50",
            "nan",
            "-inf",
            "1e999",
            "-1",
            "0",
            "\n",
            "!",
            "[Reference] 50",
            "[Matrix Format] Lower",
            "[Matrix Format] Upper",
            "[Number of Ports] 64",
            "[Number of Frequencies] 1000000",
            "[Number of Noise Frequencies] 1",
            "[Two-Port Data Order] 12_21",
            "[Mixed-Mode Order]",
            "[Begin Information]",
            "[End Information]",
            "[Version] 2.0",
            "\r",
            "µ",
            "\u{feff}",
            " ",
            "[",
            "]",
        ];
        let ports = [None, Some(0), Some(1), Some(2), Some(3), Some(4), Some(65)];
        let mut rng = XorShift(0x9E37_79B9_7F4A_7C15);
        for _ in 0..300 {
            let len = rng.below(160);
            let bytes: Vec<u8> = (0..len)
                .map(|_| {
                    if rng.below(4) == 0 {
                        rng.next() as u8
                    } else {
                        ALPHABET[rng.below(ALPHABET.len())]
                    }
                })
                .collect();
            check_any(
                &String::from_utf8_lossy(&bytes),
                ports[rng.below(ports.len())],
            );
        }
        let (mut accepted, mut refused) = (0, 0);
        for _ in 0..500 {
            let (seed, seed_ports) = &seeds[rng.below(seeds.len())];
            let mut b = seed.as_bytes().to_vec();
            for _ in 0..1 + rng.below(3) {
                let at = rng.below(b.len() + 1);
                match rng.below(7) {
                    0 if at < b.len() => b[at] = ALPHABET[rng.below(ALPHABET.len())],
                    1 => {
                        let end = (at + rng.below(20)).min(b.len());
                        b.drain(at..end);
                    }
                    2 => {
                        let w = WORDS[rng.below(WORDS.len())];
                        b.splice(at..at, w.bytes());
                    }
                    3 => {
                        let end = (at + rng.below(60)).min(b.len());
                        let piece = b[at..end].to_vec();
                        let to = rng.below(b.len() + 1);
                        b.splice(to..to, piece);
                    }
                    4 => {
                        let w = [" ", "\t", " ! c", "\n", "\r\n"][rng.below(5)];
                        b.splice(at..at, w.bytes());
                    }
                    5 if at < b.len() => b[at] = b[at].to_ascii_uppercase(),
                    _ if at < b.len() => b[at] = rng.next() as u8,
                    _ => {}
                }
            }
            let p = if rng.below(4) == 0 {
                ports[rng.below(ports.len())]
            } else {
                *seed_ports
            };
            if check_any(&String::from_utf8_lossy(&b), p) {
                accepted += 1;
            } else {
                refused += 1;
            }
        }
        // the mutations reach both outcomes, so the invariants above were
        // checked on accepted networks too
        assert!(
            accepted >= 20 && refused >= 20,
            "accepted {accepted}, refused {refused}"
        );
    }
}
