//! A reader of Touchstone files (the open standard, versions 1.1 and 2.0)
//! for one- and two-port networks measured over frequency.
//!
//! The reader takes the text of a file (read by the caller, under the
//! include roots and the file-size limit) and returns a [`Network`]: the
//! frequencies in hertz, strictly increasing, and the parameters as written
//! (S, Y or Z) in physical units — S dimensionless against the reference
//! impedance of each port, Y in siemens, Z in ohms. What the standard allows
//! and the reader accepts:
//!
//! * the option line `# <unit> <parameter> <format> R <ohms>` with its words
//!   in any order and any case, each defaulting as the standard says (GHz,
//!   S, MA, R 50); only the first option line counts;
//! * units Hz, kHz, MHz, GHz; parameters S, Y, Z; formats RI (real,
//!   imaginary), MA (magnitude, angle in degrees), DB (20·log10 of the
//!   magnitude, angle in degrees);
//! * comments from `!` to the end of a line, blank lines, numbers spread
//!   over lines in any way;
//! * version 1.1: the port count from the file name's extension
//!   (`.s1p`, `.s2p`, also `.y1p`, `.z2p`…), two-port data in the order
//!   11, 21, 12, 22, Y and Z normalised to the reference resistance (the
//!   reader multiplies Z by it and divides Y by it); two-port noise data
//!   (a frequency not above the previous one) ends the network data and is
//!   not read;
//! * version 2.0: the keywords `[Version] 2.0`, `[Number of Ports]`,
//!   `[Two-Port Data Order]` (`12_21` or `21_12`), `[Number of
//!   Frequencies]`, `[Number of Noise Frequencies]`, `[Reference]` (one
//!   resistance per port, possibly over several lines), `[Matrix Format]
//!   Full`, `[Network Data]`, `[Noise Data]` (skipped), `[Begin
//!   Information]`…`[End Information]` (skipped) and `[End]`; Y and Z in
//!   siemens and ohms, not normalised.
//!
//! Everything else is refused with the byte range of the offending text (the
//! caller turns it into file:line:column): more than two ports, H or G
//! parameters, mixed-mode data, a lower or upper matrix, a frequency that
//! does not increase, a number that is not finite, a reference resistance
//! that is not positive, too few or too many numbers, more points than
//! `LIMITS.max_network_points`. The reader never panics and keeps memory in
//! proportion to the text.

use num_complex::Complex64;
use tankwave_netlist::limits::LIMITS;

/// The parameters a file holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Parameter {
    /// Scattering parameters (dimensionless).
    S,
    /// Admittance parameters (siemens).
    Y,
    /// Impedance parameters (ohms).
    Z,
}

/// The Touchstone version a file was written in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Version {
    /// Version 1.1 (and 1.0): no keywords, ports from the extension.
    One,
    /// Version 2.0: keywords in square brackets.
    Two,
}

/// A network read from a Touchstone file.
#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    /// The version the file was written in.
    pub version: Version,
    /// Number of ports (1 or 2).
    pub ports: usize,
    /// What the data are.
    pub parameter: Parameter,
    /// Reference resistance of each port, ohms.
    pub reference: Vec<f64>,
    /// Frequencies, hertz, strictly increasing.
    pub freqs: Vec<f64>,
    /// `ports²` values per frequency, row by row (`[i·ports + j]` is
    /// parameter (i+1, j+1)), in physical units (see the module notes).
    pub data: Vec<Complex64>,
}

/// A problem in a Touchstone file: what, and where (byte range in its text).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{message}")]
pub struct TouchstoneError {
    /// First byte of the offending text.
    pub start: usize,
    /// One past its last byte.
    pub end: usize,
    /// What is wrong, in words.
    pub message: String,
}

impl TouchstoneError {
    fn at(start: usize, end: usize, message: impl Into<String>) -> TouchstoneError {
        TouchstoneError {
            start,
            end: end.max(start),
            message: message.into(),
        }
    }

    /// 1-based line and column (in characters) of the start in `text`.
    pub fn line_col(&self, text: &str) -> (usize, usize) {
        let start = self.start.min(text.len());
        let before = text.get(..start).unwrap_or("");
        let line = before.matches('\n').count() + 1;
        let col = before
            .rsplit('\n')
            .next()
            .map(|l| l.chars().count())
            .unwrap_or(0)
            + 1;
        (line, col)
    }
}

/// A word of the file (outside comments) with its byte range.
#[derive(Debug, Clone, Copy)]
struct Word<'a> {
    text: &'a str,
    start: usize,
}

impl Word<'_> {
    fn end(&self) -> usize {
        self.start + self.text.len()
    }
    fn err(&self, message: impl Into<String>) -> TouchstoneError {
        TouchstoneError::at(self.start, self.end(), message)
    }
    fn number(&self) -> Result<f64, TouchstoneError> {
        match self.text.parse::<f64>() {
            Ok(v)
                if v.is_finite()
                    && !self
                        .text
                        .chars()
                        .any(|c| c.is_alphabetic() && c != 'e' && c != 'E') =>
            {
                Ok(v)
            }
            _ => Err(self.err(format!("'{}' is not a finite number", shown(self.text)))),
        }
    }
}

/// A line of the file without its comment, with the byte offset of its start.
struct Line<'a> {
    text: &'a str,
    start: usize,
}

impl<'a> Line<'a> {
    fn words(&self) -> impl Iterator<Item = Word<'a>> + 'a {
        let base = self.start;
        let text = self.text;
        text.split(|c: char| c.is_whitespace() || c == ',')
            .filter(|w| !w.is_empty())
            .map(move |w| Word {
                text: w,
                start: base + (w.as_ptr() as usize - text.as_ptr() as usize),
            })
    }
}

fn lines(text: &str) -> Vec<Line<'_>> {
    let mut out = Vec::new();
    let mut start = 0;
    for raw in text.split_inclusive('\n') {
        let body = raw.split('!').next().unwrap_or("");
        let body = body.trim_end_matches(['\n', '\r']);
        out.push(Line { text: body, start });
        start += raw.len();
    }
    out
}

/// Text of a file shown in a message: escaped and cut short.
fn shown(s: &str) -> String {
    let cut: String = s.chars().take(40).collect();
    tankwave_netlist::escape::escape(&cut).into_owned()
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum Format {
    Ri,
    Ma,
    Db,
}

struct Options {
    scale: f64,
    parameter: Parameter,
    format: Format,
    reference: f64,
}

fn read_options(line: &Line<'_>) -> Result<Options, TouchstoneError> {
    let mut o = Options {
        scale: 1e9,
        parameter: Parameter::S,
        format: Format::Ma,
        reference: 50.0,
    };
    let mut pending: Vec<Word<'_>> = Vec::new();
    for (k, w) in line.words().enumerate() {
        if k == 0 {
            // The '#' may be glued to the first word.
            let rest = w.text.strip_prefix('#').unwrap_or(w.text);
            if !rest.is_empty() {
                pending.push(Word {
                    text: rest,
                    start: w.end() - rest.len(),
                });
            }
        } else {
            pending.push(w);
        }
    }
    let mut all = pending.into_iter();
    while let Some(w) = all.next() {
        match w.text.to_ascii_lowercase().as_str() {
            "hz" => o.scale = 1.0,
            "khz" => o.scale = 1e3,
            "mhz" => o.scale = 1e6,
            "ghz" => o.scale = 1e9,
            "s" => o.parameter = Parameter::S,
            "y" => o.parameter = Parameter::Y,
            "z" => o.parameter = Parameter::Z,
            "h" | "g" => {
                return Err(w.err(format!(
                    "{} parameters are not supported; write the file as S, Y or Z parameters",
                    w.text.to_ascii_uppercase()
                )))
            }
            "ri" => o.format = Format::Ri,
            "ma" => o.format = Format::Ma,
            "db" => o.format = Format::Db,
            "r" => {
                let Some(v) = all.next() else {
                    return Err(w.err("'R' needs the reference resistance after it"));
                };
                o.reference = positive(&v)?;
            }
            _ => {
                return Err(w.err(format!(
                    "unknown word '{}' in the option line (expected a unit Hz/kHz/MHz/GHz, S/Y/Z, RI/MA/DB or R <ohms>)",
                    shown(w.text)
                )))
            }
        }
    }
    Ok(o)
}

fn positive(w: &Word<'_>) -> Result<f64, TouchstoneError> {
    let v = w.number()?;
    if v > 0.0 {
        Ok(v)
    } else {
        Err(w.err(format!(
            "a reference resistance must be positive, not {}",
            shown(w.text)
        )))
    }
}

/// Ports from a version 1 file name: `.s1p`, `.y2p`, `.z1p`… (any case).
fn ports_from_name(name: &str) -> Option<usize> {
    let ext = name.rsplit_once('.')?.1.to_ascii_lowercase();
    let b = ext.as_bytes();
    if b.len() == 3 && matches!(b[0], b's' | b'y' | b'z') && b[2] == b'p' {
        match b[1] {
            b'1' => Some(1),
            b'2' => Some(2),
            _ => None,
        }
    } else {
        None
    }
}

/// Read the Touchstone text of the file `name` (the name gives the port
/// count of a version 1 file).
pub fn read(name: &str, text: &str) -> Result<Network, TouchstoneError> {
    let lines = lines(text);
    let first = lines.iter().find(|l| !l.text.trim().is_empty());
    let v2 = first.is_some_and(|l| {
        l.text
            .trim_start()
            .to_ascii_lowercase()
            .starts_with("[version]")
    });
    if v2 {
        read_v2(&lines, text.len())
    } else {
        read_v1(name, &lines, text.len())
    }
}

fn read_v1(name: &str, lines: &[Line<'_>], len: usize) -> Result<Network, TouchstoneError> {
    let Some(ports) = ports_from_name(name) else {
        return Err(TouchstoneError::at(
            0,
            0,
            format!(
                "cannot tell the number of ports of '{}': a version 1 file is named .s1p or .s2p (a version 2 file starts with [Version] 2.0)",
                shown(name)
            ),
        ));
    };
    let mut opts = None;
    let mut numbers: Vec<Word<'_>> = Vec::new();
    for line in lines {
        let t = line.text.trim_start();
        if t.starts_with('#') {
            if opts.is_none() {
                opts = Some(read_options(line)?);
            }
            continue;
        }
        if let Some(w) = line.words().find(|w| w.text.starts_with('[')) {
            return Err(w.err(format!(
                "keyword '{}' in a version 1 file (a version 2 file starts with [Version] 2.0)",
                shown(w.text)
            )));
        }
        if opts.is_none() && line.words().next().is_some() {
            return Err(line
                .words()
                .next()
                .map(|w| w.err("network data before the option line (# <unit> <parameter> <format> R <ohms>)"))
                .unwrap_or_else(|| TouchstoneError::at(line.start, line.start, "data before the option line")));
        }
        numbers.extend(line.words());
        if numbers.len() > per_point(ports) * (LIMITS.max_network_points + 1) + ports * 8 {
            break;
        }
    }
    let Some(opts) = opts else {
        return Err(TouchstoneError::at(
            len,
            len,
            "no option line (# <unit> <parameter> <format> R <ohms>)",
        ));
    };
    let reference = vec![opts.reference; ports];
    let (freqs, data) = network_data(&numbers, ports, &opts, None, ports == 2, len)?;
    let mut net = Network {
        version: Version::One,
        ports,
        parameter: opts.parameter,
        reference,
        freqs,
        data,
    };
    // Version 1 normalises Y and Z to the reference resistance.
    let r = opts.reference;
    match opts.parameter {
        Parameter::Z => net.data.iter_mut().for_each(|v| *v *= r),
        Parameter::Y => net.data.iter_mut().for_each(|v| *v /= r),
        Parameter::S => {}
    }
    Ok(net)
}

fn per_point(ports: usize) -> usize {
    1 + 2 * ports * ports
}

/// Group the numbers into points, convert them to complex values, and put
/// them in row order (`swap` for a two-port written 11, 21, 12, 22). With
/// `noise_ends`, a frequency not above the previous one starts noise data
/// and ends the network data.
fn network_data(
    numbers: &[Word<'_>],
    ports: usize,
    opts: &Options,
    count: Option<(usize, Word<'_>)>,
    swap: bool,
    len: usize,
) -> Result<(Vec<f64>, Vec<Complex64>), TouchstoneError> {
    let per = per_point(ports);
    let noise_ends = count.is_none() && ports == 2;
    let mut freqs: Vec<f64> = Vec::new();
    let mut data = Vec::new();
    let mut i = 0;
    while i < numbers.len() {
        let fw = numbers[i];
        let f = fw.number()? * opts.scale;
        if let Some(&prev) = freqs.last() {
            if f <= prev {
                if noise_ends {
                    break;
                }
                return Err(fw.err(format!(
                    "frequencies must increase: {} after {}",
                    crate::si::si_prefixed(f, "Hz", 6),
                    crate::si::si_prefixed(prev, "Hz", 6)
                )));
            }
        } else if f < 0.0 {
            return Err(fw.err("a frequency cannot be negative"));
        }
        if freqs.len() >= LIMITS.max_network_points {
            return Err(fw.err(format!(
                "more than {} frequency points",
                LIMITS.max_network_points
            )));
        }
        if i + per > numbers.len() {
            let last = numbers[numbers.len() - 1];
            return Err(TouchstoneError::at(
                fw.start,
                last.end(),
                format!(
                    "the point at {} has {} of its {} numbers",
                    crate::si::si_prefixed(f, "Hz", 6),
                    numbers.len() - i - 1,
                    per - 1
                ),
            ));
        }
        let mut point = Vec::with_capacity(ports * ports);
        for k in 0..ports * ports {
            let a = numbers[i + 1 + 2 * k].number()?;
            let b = numbers[i + 2 + 2 * k].number()?;
            let v = match opts.format {
                Format::Ri => Complex64::new(a, b),
                Format::Ma => Complex64::from_polar(a, b.to_radians()),
                Format::Db => Complex64::from_polar(10f64.powf(a / 20.0), b.to_radians()),
            };
            if !(v.re.is_finite() && v.im.is_finite()) {
                return Err(numbers[i + 1 + 2 * k].err("the value is not finite"));
            }
            point.push(v);
        }
        if swap {
            point.swap(1, 2);
        }
        freqs.push(f);
        data.extend(point);
        i += per;
    }
    if let Some((n, w)) = count {
        if freqs.len() != n {
            return Err(w.err(format!(
                "[Number of Frequencies] says {n}, but the network data has {}",
                freqs.len()
            )));
        }
    }
    if freqs.is_empty() {
        return Err(TouchstoneError::at(len, len, "no network data"));
    }
    Ok((freqs, data))
}

fn read_v2(lines: &[Line<'_>], len: usize) -> Result<Network, TouchstoneError> {
    let mut opts: Option<Options> = None;
    let mut ports: Option<usize> = None;
    let mut order_21_12: Option<bool> = None;
    let mut count: Option<(usize, Word<'_>)> = None;
    let mut reference: Vec<Word<'_>> = Vec::new();
    let mut in_reference = false;
    let mut in_data = false;
    let mut skipping = false;
    let mut ended = false;
    let mut numbers: Vec<Word<'_>> = Vec::new();
    let mut data_word: Option<Word<'_>> = None;
    for line in lines {
        let mut words = line.words();
        let Some(first) = words.next() else {
            continue;
        };
        if ended {
            return Err(first.err("text after [End]"));
        }
        if first.text.starts_with('#') {
            if opts.is_none() {
                opts = Some(read_options(line)?);
            }
            in_reference = false;
            continue;
        }
        if first.text.starts_with('[') {
            in_reference = false;
            // The keyword runs to its closing bracket, over spaces.
            let body = line.text.trim_start();
            let Some(close) = body.find(']') else {
                return Err(first.err("a keyword needs its closing ']'"));
            };
            let key = body[..=close].to_ascii_lowercase();
            let key = key.split_whitespace().collect::<Vec<_>>().join(" ");
            let kstart = line.start + (body.as_ptr() as usize - line.text.as_ptr() as usize);
            let kword = Word {
                text: &body[..=close],
                start: kstart,
            };
            let rest = Line {
                text: &body[close + 1..],
                start: kstart + close + 1,
            };
            let args: Vec<Word<'_>> = rest.words().collect();
            if skipping {
                if key == "[end information]" {
                    skipping = false;
                }
                continue;
            }
            if in_data && key != "[end]" && key != "[noise data]" {
                return Err(kword.err(format!(
                    "keyword {} inside the network data",
                    shown(kword.text)
                )));
            }
            match key.as_str() {
                "[version]" => match args.first() {
                    Some(v) if v.text.starts_with("2.") => {}
                    Some(v) => {
                        return Err(v.err(format!(
                            "version {} is not supported (2.0 is)",
                            shown(v.text)
                        )))
                    }
                    None => return Err(kword.err("[Version] needs a number")),
                },
                "[number of ports]" => {
                    let Some(v) = args.first() else {
                        return Err(kword.err("[Number of Ports] needs a number"));
                    };
                    ports = Some(match v.text {
                        "1" => 1,
                        "2" => 2,
                        _ => {
                            return Err(v.err(format!(
                                "{} ports: only one- and two-port networks are supported",
                                shown(v.text)
                            )))
                        }
                    });
                }
                "[two-port data order]" => match args.first().map(|w| w.text) {
                    Some("12_21") => order_21_12 = Some(false),
                    Some("21_12") => order_21_12 = Some(true),
                    _ => return Err(kword.err("[Two-Port Data Order] is 12_21 or 21_12")),
                },
                "[number of frequencies]" => {
                    let Some(v) = args.first() else {
                        return Err(kword.err("[Number of Frequencies] needs a number"));
                    };
                    let n: usize = v
                        .text
                        .parse()
                        .map_err(|_| v.err("[Number of Frequencies] needs a whole number"))?;
                    if n > LIMITS.max_network_points {
                        return Err(v.err(format!(
                            "more than {} frequency points",
                            LIMITS.max_network_points
                        )));
                    }
                    count = Some((n, kword));
                }
                "[number of noise frequencies]" => {}
                "[reference]" => {
                    reference.extend(args.iter().copied());
                    in_reference = true;
                }
                "[matrix format]" => match args.first().map(|w| w.text.to_ascii_lowercase()) {
                    Some(f) if f == "full" => {}
                    _ => return Err(kword.err("only [Matrix Format] Full is supported")),
                },
                "[mixed-mode order]" => return Err(kword.err("mixed-mode data are not supported")),
                "[begin information]" => skipping = true,
                "[network data]" => {
                    in_data = true;
                    data_word = Some(kword);
                }
                "[noise data]" => in_data = false,
                "[end]" => {
                    ended = true;
                    in_data = false;
                }
                _ => return Err(kword.err(format!("unknown keyword {}", shown(kword.text)))),
            }
            continue;
        }
        if skipping {
            continue;
        }
        if in_reference {
            reference.extend(line.words());
            continue;
        }
        if in_data {
            numbers.extend(line.words());
            if numbers.len() > 9 * (LIMITS.max_network_points + 1) {
                return Err(first.err(format!(
                    "more than {} frequency points",
                    LIMITS.max_network_points
                )));
            }
            continue;
        }
        // Lines outside the network data (noise data after [Noise Data]) are skipped
        // once the network data has been read; before it they are an error.
        if data_word.is_none() {
            return Err(first.err(format!("'{}' outside any keyword", shown(first.text))));
        }
    }
    let Some(opts) = opts else {
        return Err(TouchstoneError::at(
            len,
            len,
            "no option line (# <unit> <parameter> <format> R <ohms>)",
        ));
    };
    let Some(ports) = ports else {
        return Err(TouchstoneError::at(len, len, "no [Number of Ports]"));
    };
    let Some(data_word) = data_word else {
        return Err(TouchstoneError::at(len, len, "no [Network Data]"));
    };
    let swap = match (ports, order_21_12) {
        (2, None) => {
            return Err(data_word.err("a two-port file needs [Two-Port Data Order] before its data"))
        }
        (2, Some(s)) => s,
        _ => false,
    };
    let reference = if reference.is_empty() {
        vec![opts.reference; ports]
    } else if reference.len() == ports {
        reference
            .iter()
            .map(positive)
            .collect::<Result<Vec<_>, _>>()?
    } else {
        return Err(reference[0].err(format!(
            "[Reference] gives {} resistances for {ports} ports",
            reference.len()
        )));
    };
    let Some(count) = count else {
        return Err(data_word.err("no [Number of Frequencies] before the network data"));
    };
    let (freqs, data) = network_data(&numbers, ports, &opts, Some(count), swap, len)?;
    Ok(Network {
        version: Version::Two,
        ports,
        parameter: opts.parameter,
        reference,
        freqs,
        data,
    })
}

impl Network {
    /// The admittance matrix (siemens, row order, `ports²` values) at the
    /// file's point `k`, or `None` where it does not exist (a short circuit
    /// has no admittance).
    pub fn admittance_at(&self, k: usize) -> Option<Vec<Complex64>> {
        let n = self.ports;
        let p = self.data.get(k * n * n..(k + 1) * n * n)?;
        self.admittance_of(p)
    }

    /// The impedance matrix (ohms, row order, `ports²` values) at the
    /// file's point `k`, or `None` where it does not exist (an open circuit
    /// has no impedance).
    pub fn impedance_at(&self, k: usize) -> Option<Vec<Complex64>> {
        let n = self.ports;
        let p = self.data.get(k * n * n..(k + 1) * n * n)?;
        self.impedance_of(p)
    }

    /// The admittance matrix of one point of data in this file's parameter.
    pub fn admittance_of(&self, p: &[Complex64]) -> Option<Vec<Complex64>> {
        let one = Complex64::new(1.0, 0.0);
        let out = match (self.parameter, self.ports) {
            (Parameter::Y, _) => p.to_vec(),
            (Parameter::Z, 1) => vec![inv1(p[0])?],
            (Parameter::Z, _) => inv2(p)?.to_vec(),
            // Y = diag(1/√R) (I − S)(I + S)⁻¹ diag(1/√R) for real reference
            // resistances (power waves; common practice).
            (Parameter::S, 1) => vec![(one - p[0]) * inv1(one + p[0])? / self.reference[0]],
            (Parameter::S, _) => {
                let a = [one - p[0], -p[1], -p[2], one - p[3]];
                let b = inv2(&[one + p[0], p[1], p[2], one + p[3]])?;
                let g: Vec<f64> = self.reference.iter().map(|r| 1.0 / r.sqrt()).collect();
                scaled(&product(&a, &b), &g)
            }
        };
        finite(out)
    }

    /// The impedance matrix of one point of data in this file's parameter.
    pub fn impedance_of(&self, p: &[Complex64]) -> Option<Vec<Complex64>> {
        let one = Complex64::new(1.0, 0.0);
        let out = match (self.parameter, self.ports) {
            (Parameter::Z, _) => p.to_vec(),
            (Parameter::Y, 1) => vec![inv1(p[0])?],
            (Parameter::Y, _) => inv2(p)?.to_vec(),
            // Z = diag(√R) (I + S)(I − S)⁻¹ diag(√R), the inverse of the
            // admittance above (common practice).
            (Parameter::S, 1) => vec![(one + p[0]) * inv1(one - p[0])? * self.reference[0]],
            (Parameter::S, _) => {
                let a = [one + p[0], p[1], p[2], one + p[3]];
                let b = inv2(&[one - p[0], -p[1], -p[2], one - p[3]])?;
                let g: Vec<f64> = self.reference.iter().map(|r| r.sqrt()).collect();
                scaled(&product(&a, &b), &g)
            }
        };
        finite(out)
    }
}

/// The product of two 2×2 matrices (row order).
fn product(a: &[Complex64; 4], b: &[Complex64; 4]) -> [Complex64; 4] {
    [
        a[0] * b[0] + a[1] * b[2],
        a[0] * b[1] + a[1] * b[3],
        a[2] * b[0] + a[3] * b[2],
        a[2] * b[1] + a[3] * b[3],
    ]
}

/// `diag(g) m diag(g)` of a 2×2 matrix (row order).
fn scaled(m: &[Complex64; 4], g: &[f64]) -> Vec<Complex64> {
    vec![
        m[0] * g[0] * g[0],
        m[1] * g[0] * g[1],
        m[2] * g[1] * g[0],
        m[3] * g[1] * g[1],
    ]
}

fn finite(v: Vec<Complex64>) -> Option<Vec<Complex64>> {
    v.iter()
        .all(|v| v.re.is_finite() && v.im.is_finite())
        .then_some(v)
}

/// What a measured network is at a frequency its file does not cover.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Outside {
    /// Nothing said: such a frequency is an error at lint time.
    Refuse,
    /// Every port open (zero admittance).
    Open,
    /// The nearest point of the file (at 0 Hz, the real part of its
    /// value, since a DC admittance or impedance is real).
    Hold,
    /// Every port terminated in this resistance, Ω (> 0), the ports uncoupled.
    Resistance(f64),
    /// Every port short-circuited (zero impedance): the network is then held
    /// in [`Form::Impedance`], since a short has no admittance.
    Short,
}

/// Which matrix a measured network is held as.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Form {
    /// The admittance matrix Y (S): every out-of-band rule but a short.
    Admittance,
    /// The impedance matrix Z (Ω): with [`Outside::Short`].
    Impedance,
}

impl Form {
    /// The unit of the matrix's entries.
    pub fn unit(self) -> &'static str {
        match self {
            Form::Admittance => "S",
            Form::Impedance => crate::unit::Unit::Ohm.symbol(),
        }
    }

    /// The matrix's name in words.
    pub fn word(self) -> &'static str {
        match self {
            Form::Admittance => "admittance",
            Form::Impedance => "impedance",
        }
    }
}

/// A measured network as the circuit uses it: its admittance matrix (or,
/// with a short out of band, its impedance matrix: [`Form`]) at each point
/// of its file and what holds outside the file's band.
///
/// Between points the matrix is interpolated linearly in its real and
/// imaginary parts, entry by entry (documented in docs/analyses.md); the
/// error of that is second order in the point spacing.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasuredNetwork {
    /// Number of ports (1 or 2).
    pub ports: usize,
    /// Frequencies of the file, Hz, strictly increasing.
    pub freqs: Vec<f64>,
    /// `ports²` values per point, row order: admittances in S, or
    /// impedances in Ω in [`Form::Impedance`] ([`MeasuredNetwork::form`]).
    pub values: Vec<Complex64>,
    /// What holds outside `freqs`.
    pub outside: Outside,
    /// The fitted rational model the time-domain analyses use (made at
    /// elaboration when the file asks for one; `None` otherwise), of the
    /// same matrix as `values`.
    pub fit: Option<std::sync::Arc<crate::rational::Fitted>>,
}

impl MeasuredNetwork {
    /// The network of a file read by [`read`]: every point converted to the
    /// matrix of the form `outside` implies, or the index of the first
    /// point that has none (a short has no admittance, an open no
    /// impedance).
    pub fn from_network(net: &Network, outside: Outside) -> Result<MeasuredNetwork, usize> {
        let impedance = Self::form_of(outside) == Form::Impedance;
        let mut values = Vec::with_capacity(net.data.len());
        for k in 0..net.freqs.len() {
            let v = if impedance {
                net.impedance_at(k)
            } else {
                net.admittance_at(k)
            };
            values.extend(v.ok_or(k)?);
        }
        Ok(MeasuredNetwork {
            ports: net.ports,
            freqs: net.freqs.clone(),
            values,
            outside,
            fit: None,
        })
    }

    /// The form a network with this out-of-band rule is held in.
    pub fn form_of(outside: Outside) -> Form {
        match outside {
            Outside::Short => Form::Impedance,
            _ => Form::Admittance,
        }
    }

    /// The form this network is held in.
    pub fn form(&self) -> Form {
        Self::form_of(self.outside)
    }

    /// The matrix the element has at 0 Hz (its bias point), in its
    /// [`Form`], row order: the fitted model's when it has one (the
    /// time-domain model is used at every frequency its analyses reach, DC
    /// included), else the real part of the out-of-band rule's (or the
    /// file's) value.
    pub fn dc_value(&self) -> Option<Vec<f64>> {
        if let Some(f) = &self.fit {
            return Some(f.dc.clone());
        }
        Some(self.value(0.0)?.iter().map(|v| v.re).collect())
    }

    /// The admittance at 0 Hz, S, as [`MeasuredNetwork::dc_value`];
    /// `None` in [`Form::Impedance`].
    pub fn dc_admittance(&self) -> Option<Vec<f64>> {
        match self.form() {
            Form::Admittance => self.dc_value(),
            Form::Impedance => None,
        }
    }

    /// True if `f` lies within the file's band (first to last point).
    pub fn covers(&self, f: f64) -> bool {
        match (self.freqs.first(), self.freqs.last()) {
            (Some(a), Some(b)) => f >= *a && f <= *b,
            _ => false,
        }
    }

    /// The band of the file, Hz.
    pub fn band(&self) -> (f64, f64) {
        (
            self.freqs.first().copied().unwrap_or(0.0),
            self.freqs.last().copied().unwrap_or(0.0),
        )
    }

    /// The admittance matrix at `f` (Hz), S, row order: interpolated
    /// within the band, by the [`Outside`] rule beyond it; `None` outside the
    /// band when the rule is [`Outside::Refuse`], and always `None` in
    /// [`Form::Impedance`].
    pub fn admittance(&self, f: f64) -> Option<Vec<Complex64>> {
        match self.form() {
            Form::Admittance => self.value(f),
            Form::Impedance => None,
        }
    }

    /// The impedance matrix at `f` (Hz), Ω, row order, in
    /// [`Form::Impedance`] (`None` in the admittance form): interpolated
    /// within the band, zero (every port short) beyond it.
    pub fn impedance(&self, f: f64) -> Option<Vec<Complex64>> {
        match self.form() {
            Form::Impedance => self.value(f),
            Form::Admittance => None,
        }
    }

    /// The matrix of the network's [`Form`] at `f` (Hz), row order:
    /// interpolated within the band, by the [`Outside`] rule beyond it;
    /// `None` outside the band when the rule is [`Outside::Refuse`].
    pub fn value(&self, f: f64) -> Option<Vec<Complex64>> {
        let n2 = self.ports * self.ports;
        let at = |k: usize| {
            self.values
                .get(k * n2..(k + 1) * n2)
                .map(<[Complex64]>::to_vec)
        };
        let last = self.freqs.len().checked_sub(1)?;
        if !self.covers(f) {
            let zero = Complex64::new(0.0, 0.0);
            return match self.outside {
                Outside::Refuse => None,
                // zero admittance (open) or zero impedance (short)
                Outside::Open | Outside::Short => Some(vec![zero; n2]),
                Outside::Resistance(r) => Some(
                    (0..n2)
                        .map(|i| {
                            if i % (self.ports + 1) == 0 {
                                Complex64::new(1.0 / r, 0.0)
                            } else {
                                zero
                            }
                        })
                        .collect(),
                ),
                Outside::Hold => {
                    let k = if f < self.freqs[0] { 0 } else { last };
                    let mut v = at(k)?;
                    if f == 0.0 {
                        v.iter_mut().for_each(|x| x.im = 0.0);
                    }
                    Some(v)
                }
            };
        }
        // The last point at or below f.
        let k = self.freqs.partition_point(|x| *x <= f).saturating_sub(1);
        if k >= last {
            return at(last);
        }
        let (f0, f1) = (self.freqs[k], self.freqs[k + 1]);
        let t = (f - f0) / (f1 - f0);
        let (a, b) = (at(k)?, at(k + 1)?);
        Some(a.iter().zip(&b).map(|(a, b)| a + (b - a) * t).collect())
    }
}

fn inv1(z: Complex64) -> Option<Complex64> {
    let r = z.inv();
    (z.norm() > 1e-300 && r.re.is_finite() && r.im.is_finite()).then_some(r)
}

fn inv2(m: &[Complex64]) -> Option<[Complex64; 4]> {
    let det = m[0] * m[3] - m[1] * m[2];
    let scale = m.iter().map(|v| v.norm()).fold(0.0, f64::max);
    if det.norm() <= scale * scale * 1e-14 {
        return None;
    }
    let d = inv1(det)?;
    Some([m[3] * d, -m[1] * d, -m[2] * d, m[0] * d])
}

#[cfg(test)]
mod tests {
    use super::*;

    fn err(name: &str, text: &str) -> (usize, usize, String) {
        let e = read(name, text).unwrap_err();
        let (l, c) = e.line_col(text);
        (l, c, e.message)
    }

    #[test]
    fn defaults_are_ghz_s_ma_50() {
        // Touchstone 1.1: a bare '#' means GHz S MA R 50.
        let n = read("a.s1p", "#\n1 0.5 90\n2 0.5 180\n").unwrap();
        assert_eq!(n.freqs, vec![1e9, 2e9]);
        assert_eq!(n.reference, vec![50.0]);
        assert!((n.data[0] - Complex64::new(0.0, 0.5)).norm() < 1e-15);
    }

    #[test]
    fn a_one_port_at_any_reference() {
        // S = 0 at R 75 is a 75 ohm resistor: Y = 1/75 S (definition of S).
        let n = read("a.s1p", "! c\n# mhz s ri r 75\n10 0 0 ! x\n").unwrap();
        let y = n.admittance_at(0).unwrap();
        assert!((y[0] - Complex64::new(1.0 / 75.0, 0.0)).norm() < 1e-15);
    }

    #[test]
    fn errors_point_at_the_text() {
        assert_eq!(err("a.s1p", "# MHz S RI\n1 0 0\n1 0 0\n").0, 3);
        assert_eq!(err("a.s1p", "# MHz S RI\n1 0 x\n").1, 5);
        assert_eq!(err("a.s1p", "# MHz Q RI\n").1, 7);
        assert_eq!(err("a.s1p", "# MHz S RI R -5\n").1, 14);
        assert!(err("a.txt", "# MHz S RI\n1 0 0\n").2.contains("ports"));
        assert!(err("a.s1p", "# MHz S RI\n1 0 nan\n").2.contains("finite"));
        assert!(err("a.s1p", "# MHz S RI\n1 0 inf\n").2.contains("finite"));
        assert!(err("a.s1p", "# MHz S RI\n1 0\n").2.contains("numbers"));
        assert!(err("a.s3p", "# MHz S RI\n").2.contains("ports"));
        assert!(err("a.s1p", "# MHz H RI\n").2.contains("not supported"));
        let v2 = "[Version] 2.0\n# MHz S RI\n[Number of Ports] 1\n[Number of Frequencies] 2\n[Network Data]\n1 0 0\n[End]\n";
        let (l, _, m) = err("a.ts", v2);
        assert_eq!(l, 4);
        assert!(m.contains("says 2"));
        let v2 = "[Version] 2.0\n# MHz S RI\n[Number of Ports] 2\n[Number of Frequencies] 1\n[Network Data]\n1 0 0 0 0 0 0 0 0\n[End]\n";
        assert!(err("a.ts", v2).2.contains("Data Order"));
        assert!(err("a.ts", "[Version] 2.0\n# MHz S RI\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data]\n1 0 0\n[End]\n2 0 0\n").2.contains("after [End]"));
        assert!(err("a.s1p", "").2.contains("option line"));
    }

    #[test]
    fn a_two_port_v1_is_read_11_21_12_22() {
        // Touchstone 1.1: a two-port line is f S11 S21 S12 S22.
        let n = read("a.s2p", "# Hz S RI R 50\n1 1 0 2 0 3 0 4 0\n").unwrap();
        let re: Vec<f64> = n.data.iter().map(|v| v.re).collect();
        assert_eq!(re, vec![1.0, 3.0, 2.0, 4.0]);
    }

    #[test]
    fn two_port_noise_data_ends_the_network_data() {
        let n = read(
            "a.s2p",
            "# Hz S RI R 50\n1 0 0 0 0 0 0 0 0\n2 0 0 0 0 0 0 0 0\n1 2 3 4 5\n",
        )
        .unwrap();
        assert_eq!(n.freqs.len(), 2);
    }

    #[test]
    fn a_short_has_no_admittance() {
        let n = read("a.s1p", "# Hz S RI R 50\n1 -1 0\n").unwrap();
        assert!(n.admittance_at(0).is_none());
    }

    #[test]
    fn interpolation_and_outside_rules() {
        let n = read("a.s1p", "# Hz Y RI R 1\n10 1 0\n20 3 2\n").unwrap();
        let m = MeasuredNetwork::from_network(&n, Outside::Refuse).unwrap();
        // Linear in real and imaginary parts: halfway is the mean.
        assert_eq!(m.admittance(15.0).unwrap()[0], Complex64::new(2.0, 1.0));
        assert_eq!(m.admittance(20.0).unwrap()[0], Complex64::new(3.0, 2.0));
        assert!(m.admittance(5.0).is_none() && m.admittance(21.0).is_none());
        let hold = MeasuredNetwork {
            outside: Outside::Hold,
            ..m.clone()
        };
        assert_eq!(hold.admittance(30.0).unwrap()[0], Complex64::new(3.0, 2.0));
        assert_eq!(hold.admittance(0.0).unwrap()[0], Complex64::new(1.0, 0.0));
        let r = MeasuredNetwork {
            outside: Outside::Resistance(4.0),
            ..m.clone()
        };
        assert_eq!(r.admittance(0.0).unwrap()[0], Complex64::new(0.25, 0.0));
        let open = MeasuredNetwork {
            outside: Outside::Open,
            ..m
        };
        assert_eq!(open.admittance(1e9).unwrap()[0], Complex64::new(0.0, 0.0));
    }

    #[test]
    fn no_panic_on_junk() {
        for t in [
            "#",
            "# R",
            "[",
            "[Version]",
            "[Version] 2.0\n[",
            "#\n1e400 0 0",
            "# MHz\n\u{202e} 1 2",
            "[Version] 2.0\n[Reference] 50\n",
            "1 2 3",
        ] {
            let _ = read("a.s1p", t);
            let _ = read("a.ts", t);
        }
    }
}
