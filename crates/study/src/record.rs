//! Records: one per variant, streamed as JSON Lines, read back for resume,
//! merge and summary, exported as CSV.
//!
//! A record file (schema `tankwave-study-records`, version 1) is UTF-8 text,
//! one JSON object per line:
//!
//! * line 1, the header: `{"schema":"tankwave-study-records","version":1,
//!   "plan":"<16 hex digits>","variants":N,"chain":C,"shard":{"index":i,"count":n}|null,
//!   "input":"<caller's fingerprint>","provenance":{…}}` (`input` and
//!   `provenance` optional; [`Provenance`]: tool version, `--set` overrides,
//!   SHA-256 of the stage file and of every included file);
//! * every further line, one record: `{"index":i,"values":{…},"metrics":{…},
//!   "verdicts":{"<requirement>":{"pass":true,"margin":0.12}},"error":"…"}`
//!   (`error` present only for a failed variant, whose metrics and verdicts are empty).
//!
//! Records appear in order of completion; each carries its index. Each line is
//! written whole and flushed before the next variant is reported, so a killed
//! run leaves at most one partial last line, which [`resume`] cuts off (that
//! variant is then run again).

use std::collections::BTreeMap;
use std::fs::{File, OpenOptions};
use std::io::{BufRead, BufReader, Seek, SeekFrom, Write};
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::StudyError;

/// The schema name written in every header.
pub const SCHEMA: &str = "tankwave-study-records";
/// The schema version this crate writes and reads.
pub const SCHEMA_VERSION: u32 = 1;

/// A deterministic share of a study: shard `index` of `count`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    /// 0-based shard number.
    pub index: u64,
    /// Number of shards (≥ 1).
    pub count: u64,
}

impl Shard {
    /// A checked shard `index/count`.
    pub fn new(index: u64, count: u64) -> Result<Shard, StudyError> {
        if count == 0 || index >= count {
            return Err(StudyError::BadShard { index, count });
        }
        Ok(Shard { index, count })
    }
    /// Parse `"i/n"` (e.g. `"0/4"`).
    pub fn parse(text: &str) -> Option<Shard> {
        let (a, b) = text.split_once('/')?;
        Shard::new(a.trim().parse().ok()?, b.trim().parse().ok()?).ok()
    }
}

/// A fingerprint of the bytes of an input (e.g. the stage file) for
/// [`Header::with_input`]: FNV-1a, 64 bit, as 16 lowercase hex digits. It
/// tells files apart; it is no security hash.
pub fn input_fingerprint(bytes: &[u8]) -> String {
    let mut h = crate::plan::Fnv::new();
    h.bytes(bytes);
    format!("{:016x}", h.0)
}

/// The first line of a record file.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Header {
    /// Always [`SCHEMA`].
    pub schema: String,
    /// [`SCHEMA_VERSION`].
    pub version: u32,
    /// The plan fingerprint as 16 lowercase hex digits.
    pub plan: String,
    /// Number of variants of the whole (unsharded) study.
    pub variants: u64,
    /// Warm-start chain length the records were made with.
    pub chain: u64,
    /// The shard these records belong to (`None` = all).
    pub shard: Option<Shard>,
    /// The caller's fingerprint of everything else that shapes the results
    /// (e.g. a hash of the stage file and the solver options); compared on
    /// resume and merge. Absent in files that did not set it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub input: Option<String>,
    /// What the records were made from; compared setting by setting on resume
    /// and merge. Absent in files that did not set it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub provenance: Option<Provenance>,
}

/// The SHA-256 of one input file.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct FileDigest {
    /// The file name as the stage file (or the command line) gave it.
    pub file: String,
    /// SHA-256 of its bytes, 64 lowercase hex digits.
    pub sha256: String,
}

/// What a record file was made from, stated in its header: records made from
/// different inputs or settings are never joined (`merge`, `study --resume`).
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Provenance {
    /// Name and version of the tool that wrote the records.
    pub tool: String,
    /// The `--set` overrides: parameter name → value in SI units (shortest
    /// text that reads back to the same number).
    pub overrides: BTreeMap<String, String>,
    /// The stage file.
    pub stage: FileDigest,
    /// Every included file, in order of reading.
    pub includes: Vec<FileDigest>,
}

impl Provenance {
    /// The first setting in which `found` differs from `self`:
    /// (setting, value here, value there).
    pub fn difference(&self, found: &Provenance) -> Option<(String, String, String)> {
        if found.tool != self.tool {
            return Some(("tool version".into(), self.tool.clone(), found.tool.clone()));
        }
        let keys: std::collections::BTreeSet<&String> = self
            .overrides
            .keys()
            .chain(found.overrides.keys())
            .collect();
        for k in keys {
            let (a, b) = (self.overrides.get(k), found.overrides.get(k));
            if a != b {
                let show = |v: Option<&String>| match v {
                    Some(v) => format!("{k}={v}"),
                    None => "not set".to_string(),
                };
                return Some((format!("--set {k}"), show(a), show(b)));
            }
        }
        if found.stage.sha256 != self.stage.sha256 {
            return Some((
                format!("stage file content ({})", self.stage.file),
                format!("SHA-256 {}", self.stage.sha256),
                format!("SHA-256 {}", found.stage.sha256),
            ));
        }
        for (k, a) in self.includes.iter().enumerate() {
            match found.includes.get(k) {
                Some(b) if b.sha256 == a.sha256 => {}
                Some(b) => {
                    return Some((
                        format!("included file {}", a.file),
                        format!("{} SHA-256 {}", a.file, a.sha256),
                        format!("{} SHA-256 {}", b.file, b.sha256),
                    ))
                }
                None => {
                    return Some((
                        format!("included file {}", a.file),
                        "included".into(),
                        "not included".into(),
                    ))
                }
            }
        }
        if let Some(b) = found.includes.get(self.includes.len()) {
            return Some((
                format!("included file {}", b.file),
                "not included".into(),
                "included".into(),
            ));
        }
        None
    }
}

impl Header {
    /// The header for a run of `plan` with `chain` and `shard`.
    pub fn new(plan: &crate::Plan, chain: u64, shard: Option<Shard>) -> Header {
        Header {
            schema: SCHEMA.to_string(),
            version: SCHEMA_VERSION,
            plan: format!("{:016x}", plan.fingerprint()),
            variants: plan.len(),
            chain,
            shard,
            input: None,
            provenance: None,
        }
    }

    /// The same header stating what the records are made from.
    pub fn with_provenance(mut self, provenance: Provenance) -> Header {
        self.provenance = Some(provenance);
        self
    }

    /// The same header with the caller's input fingerprint set.
    pub fn with_input(mut self, input: impl Into<String>) -> Header {
        self.input = Some(input.into());
        self
    }

    /// Check that `found` (read from `file`) describes the same study;
    /// `with_shard` also compares the shard.
    pub fn check(&self, found: &Header, file: &str, with_shard: bool) -> Result<(), StudyError> {
        let mismatch = |field: &'static str, expected: String, got: String| {
            Err(StudyError::HeaderMismatch {
                file: file.to_string(),
                field,
                expected,
                found: got,
            })
        };
        if found.schema != self.schema {
            return mismatch("schema", self.schema.clone(), found.schema.clone());
        }
        if found.version != self.version {
            return mismatch(
                "version",
                self.version.to_string(),
                found.version.to_string(),
            );
        }
        if let (Some(a), Some(b)) = (&self.provenance, &found.provenance) {
            if let Some((setting, expected, got)) = a.difference(b) {
                return Err(StudyError::ProvenanceMismatch {
                    file: file.to_string(),
                    setting,
                    expected,
                    found: got,
                });
            }
        } else if self.provenance.is_some() != found.provenance.is_some() {
            let say = |p: &Option<Provenance>| match p {
                Some(p) => format!("stated ({})", p.tool),
                None => "not stated (an older record file)".to_string(),
            };
            return Err(StudyError::ProvenanceMismatch {
                file: file.to_string(),
                setting: "record provenance".into(),
                expected: say(&self.provenance),
                found: say(&found.provenance),
            });
        }
        if found.plan != self.plan {
            return mismatch("plan", self.plan.clone(), found.plan.clone());
        }
        if found.variants != self.variants {
            return mismatch(
                "variants",
                self.variants.to_string(),
                found.variants.to_string(),
            );
        }
        if found.chain != self.chain {
            return mismatch("chain", self.chain.to_string(), found.chain.to_string());
        }
        if found.input != self.input {
            return mismatch(
                "input",
                format!("{:?}", self.input),
                format!("{:?}", found.input),
            );
        }
        if with_shard && found.shard != self.shard {
            return mismatch(
                "shard",
                format!("{:?}", self.shard),
                format!("{:?}", found.shard),
            );
        }
        Ok(())
    }
}

/// A requirement's verdict on one variant.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Verdict {
    /// The requirement holds.
    pub pass: bool,
    /// Distance to the bound, positive when passing, in the requirement's
    /// own scale (the measure crate defines it; the study only compares margins).
    pub margin: f64,
}

/// The result of one variant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Record {
    /// Variant number.
    pub index: u64,
    /// The variant's swept values and tolerance factors (see [`crate::Variant::values`]).
    #[serde(default)]
    pub values: BTreeMap<String, f64>,
    /// Measured figures, name → value (finite).
    #[serde(default)]
    pub metrics: BTreeMap<String, f64>,
    /// Requirement verdicts, requirement text → verdict.
    #[serde(default)]
    pub verdicts: BTreeMap<String, Verdict>,
    /// Why the variant failed, if it did.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub error: Option<String>,
}

impl Record {
    /// True if the variant ran and every requirement passed.
    pub fn passes_all(&self) -> bool {
        self.error.is_none() && self.verdicts.values().all(|v| v.pass)
    }
}

/// Where the runner puts records. Implementations must write each record
/// durably enough that a killed process keeps it (flush per record).
pub trait RecordSink: Send {
    /// Store one record.
    fn record(&mut self, record: &Record) -> Result<(), StudyError>;
}

/// A sink that streams JSON Lines to a writer, flushing after every record.
pub struct JsonlSink<W: Write> {
    out: W,
}

impl<W: Write> JsonlSink<W> {
    /// Start a new record file: writes `header` as the first line.
    pub fn create(mut out: W, header: &Header) -> Result<Self, StudyError> {
        write_line(&mut out, header)?;
        Ok(JsonlSink { out })
    }
    /// Continue a record file whose header is already written (see [`resume`]).
    pub fn append(out: W) -> Self {
        JsonlSink { out }
    }
    /// Give back the writer.
    pub fn into_inner(self) -> W {
        self.out
    }
}

fn write_line<T: Serialize>(out: &mut impl Write, value: &T) -> Result<(), StudyError> {
    let io = |source| StudyError::Io {
        what: "writing a record".to_string(),
        source,
    };
    let mut line = serde_json::to_vec(value).map_err(|e| io(std::io::Error::other(e)))?;
    line.push(b'\n');
    out.write_all(&line).map_err(io)?;
    out.flush().map_err(io)
}

impl<W: Write + Send> RecordSink for JsonlSink<W> {
    fn record(&mut self, record: &Record) -> Result<(), StudyError> {
        write_line(&mut self.out, record)
    }
}

/// The columns of a streamed CSV file, fixed when it starts.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct CsvLayout {
    /// Value columns (e.g. [`crate::Plan::value_keys`]).
    pub values: Vec<String>,
    /// Figure columns.
    pub metrics: Vec<String>,
    /// Requirement texts; each gives a `<text> pass` and a `<text> margin` column.
    pub verdicts: Vec<String>,
}

impl CsvLayout {
    fn header(&self) -> Vec<String> {
        let mut head = vec!["index".to_string()];
        head.extend(self.values.iter().cloned());
        head.extend(self.metrics.iter().cloned());
        for v in &self.verdicts {
            head.push(format!("{v} pass"));
            head.push(format!("{v} margin"));
        }
        head.push("error".to_string());
        head
    }

    fn row(&self, r: &Record) -> Vec<String> {
        let num = |x: Option<&f64>| x.map(|v| v.to_string()).unwrap_or_default();
        let mut row = vec![r.index.to_string()];
        row.extend(self.values.iter().map(|k| num(r.values.get(k))));
        row.extend(self.metrics.iter().map(|k| num(r.metrics.get(k))));
        for k in &self.verdicts {
            match r.verdicts.get(k) {
                Some(v) => {
                    row.push(v.pass.to_string());
                    row.push(v.margin.to_string());
                }
                None => {
                    row.push(String::new());
                    row.push(String::new());
                }
            }
        }
        row.push(r.error.clone().unwrap_or_default());
        row
    }
}

fn csv_err(e: csv::Error) -> StudyError {
    StudyError::Io {
        what: "writing CSV".to_string(),
        source: std::io::Error::other(e),
    }
}

/// A sink that streams CSV rows with columns fixed at the start, flushing
/// after every row. Figures outside the layout are left out (the JSON Lines
/// file keeps everything; only it can be resumed and merged).
pub struct CsvSink<W: Write> {
    out: csv::Writer<W>,
    layout: CsvLayout,
}

impl<W: Write> CsvSink<W> {
    /// Start a CSV file: writes the header row.
    pub fn create(out: W, layout: CsvLayout) -> Result<Self, StudyError> {
        let mut out = csv::Writer::from_writer(out);
        out.write_record(layout.header()).map_err(csv_err)?;
        out.flush().map_err(|source| StudyError::Io {
            what: "writing CSV".to_string(),
            source,
        })?;
        Ok(CsvSink { out, layout })
    }
}

impl<W: Write> CsvSink<W> {
    /// Give back the writer (after a final flush).
    pub fn into_inner(self) -> Result<W, StudyError> {
        self.out.into_inner().map_err(|e| StudyError::Io {
            what: "writing CSV".to_string(),
            source: std::io::Error::other(e.to_string()),
        })
    }
}

impl<W: Write + Send> RecordSink for CsvSink<W> {
    fn record(&mut self, record: &Record) -> Result<(), StudyError> {
        self.out
            .write_record(self.layout.row(record))
            .map_err(csv_err)?;
        self.out.flush().map_err(|source| StudyError::Io {
            what: "writing CSV".to_string(),
            source,
        })
    }
}

/// Sends every record to two sinks (e.g. JSON Lines for resume and CSV for a spreadsheet).
pub struct TeeSink<A, B>(pub A, pub B);

impl<A: RecordSink, B: RecordSink> RecordSink for TeeSink<A, B> {
    fn record(&mut self, record: &Record) -> Result<(), StudyError> {
        self.0.record(record)?;
        self.1.record(record)
    }
}

/// A sink that keeps records in memory (for tests and small studies).
#[derive(Debug, Default)]
pub struct MemorySink {
    /// The records in order of arrival.
    pub records: Vec<Record>,
}

impl RecordSink for MemorySink {
    fn record(&mut self, record: &Record) -> Result<(), StudyError> {
        self.records.push(record.clone());
        Ok(())
    }
}

/// The set of variant indices already recorded. Kept sparse (memory grows
/// with the records read, not with the indices they name), so that a record
/// file naming variant 10^18 costs one entry, not 10^18 bits.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct DoneSet {
    indices: std::collections::BTreeSet<u64>,
}

impl DoneSet {
    /// An empty set.
    pub fn new() -> Self {
        Self::default()
    }
    /// Mark `index` done; returns false if it already was.
    pub fn insert(&mut self, index: u64) -> bool {
        self.indices.insert(index)
    }
    /// Is `index` done?
    pub fn contains(&self, index: u64) -> bool {
        self.indices.contains(&index)
    }
    /// Number of indices done.
    pub fn len(&self) -> u64 {
        self.indices.len() as u64
    }
    /// True if nothing is done.
    pub fn is_empty(&self) -> bool {
        self.indices.is_empty()
    }
}

/// One parsed line of a record file.
enum Line {
    Complete(Vec<u8>),
    /// Last line without a newline: cut short by a killed writer.
    Truncated,
    End,
}

/// Reads a record file line by line, keeping the byte offset of the last complete line.
pub struct RecordReader<R: BufRead> {
    input: R,
    name: String,
    line: u64,
    good_len: u64,
    truncated: bool,
    header: Option<Header>,
}

impl<R: BufRead> RecordReader<R> {
    /// Read the header of `input` (named `name` in messages). An empty input
    /// or a cut-off header gives `Ok(None)`.
    pub fn open(input: R, name: &str) -> Result<Option<Self>, StudyError> {
        let mut r = RecordReader {
            input,
            name: name.to_string(),
            line: 0,
            good_len: 0,
            truncated: false,
            header: None,
        };
        match r.next_line()? {
            Line::End | Line::Truncated => Ok(None),
            Line::Complete(bytes) => {
                let header: Header =
                    serde_json::from_slice(&bytes).map_err(|e| StudyError::BadLine {
                        file: r.name.clone(),
                        line: 1,
                        message: format!("not a study header: {e}"),
                    })?;
                r.header = Some(header);
                Ok(Some(r))
            }
        }
    }

    /// The header.
    pub fn header(&self) -> Option<&Header> {
        self.header.as_ref()
    }

    /// Bytes up to and including the last complete line read so far.
    pub fn good_len(&self) -> u64 {
        self.good_len
    }

    /// True if the input ended in a partial line (which was skipped).
    pub fn truncated(&self) -> bool {
        self.truncated
    }

    fn next_line(&mut self) -> Result<Line, StudyError> {
        let mut buf = Vec::new();
        let n = self
            .input
            .read_until(b'\n', &mut buf)
            .map_err(|source| StudyError::Io {
                what: format!("reading {}", self.name),
                source,
            })?;
        if n == 0 {
            return Ok(Line::End);
        }
        if buf.last() != Some(&b'\n') {
            self.truncated = true;
            return Ok(Line::Truncated);
        }
        self.line += 1;
        self.good_len += n as u64;
        buf.pop();
        Ok(Line::Complete(buf))
    }

    /// The next record, `None` at the end (or at a truncated last line).
    pub fn next_record(&mut self) -> Result<Option<Record>, StudyError> {
        loop {
            match self.next_line()? {
                Line::End | Line::Truncated => return Ok(None),
                Line::Complete(bytes) => {
                    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
                        continue;
                    }
                    let rec: Record =
                        serde_json::from_slice(&bytes).map_err(|e| StudyError::BadLine {
                            file: self.name.clone(),
                            line: self.line,
                            message: e.to_string(),
                        })?;
                    if let Some(h) = &self.header {
                        if rec.index >= h.variants {
                            return Err(StudyError::BadLine {
                                file: self.name.clone(),
                                line: self.line,
                                message: format!(
                                    "variant {} beyond the study's {} variants",
                                    rec.index, h.variants
                                ),
                            });
                        }
                    }
                    return Ok(Some(rec));
                }
            }
        }
    }
}

impl<R: BufRead> Iterator for RecordReader<R> {
    type Item = Result<Record, StudyError>;
    fn next(&mut self) -> Option<Self::Item> {
        self.next_record().transpose()
    }
}

/// What [`resume`] found.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ResumeInfo {
    /// Records found (counting each variant once).
    pub recorded: u64,
    /// Bytes of a partial last line that were cut off (0 if none).
    pub cut_bytes: u64,
    /// The file had no (complete) header and was started afresh.
    pub restarted: bool,
}

/// Open the record file at `path` to continue a study: check its header
/// against `expected` (same plan, chain and shard), collect the indices
/// already recorded, cut off a partial last line, and return a sink that
/// appends. A missing or empty file is created with the header.
pub fn resume(
    path: &Path,
    expected: &Header,
) -> Result<(DoneSet, JsonlSink<File>, ResumeInfo), StudyError> {
    struct Discard;
    impl RecordSink for Discard {
        fn record(&mut self, _: &Record) -> Result<(), StudyError> {
            Ok(())
        }
    }
    resume_replaying(path, expected, &mut Discard)
}

/// [`resume`], and hand every complete record already in the file to
/// `replay` as it is read (in file order; a variant recorded more than once
/// only the first time), so that a summary of the
/// continued run covers the whole study: the records of earlier runs, or of
/// merged shards, and the ones about to be added.
pub fn resume_replaying(
    path: &Path,
    expected: &Header,
    replay: &mut dyn RecordSink,
) -> Result<(DoneSet, JsonlSink<File>, ResumeInfo), StudyError> {
    let name = path.display().to_string();
    let io = |what: &str, source| StudyError::Io {
        what: format!("{what} {name}"),
        source,
    };
    let mut file = OpenOptions::new()
        .read(true)
        .write(true)
        .create(true)
        .truncate(false)
        .open(path)
        .map_err(|e| io("opening", e))?;
    let size = file.metadata().map_err(|e| io("reading", e))?.len();
    let mut done = DoneSet::new();
    let reader = RecordReader::open(BufReader::new(&mut file), &name)?;
    let (good_len, restarted) = match reader {
        None => (0, true),
        Some(mut r) => {
            if let Some(h) = r.header() {
                expected.check(h, &name, true)?;
            }
            while let Some(rec) = r.next_record()? {
                // A variant recorded twice (a file appended to by hand, or
                // two runs racing) is counted and summarised once.
                if done.insert(rec.index) {
                    replay.record(&rec)?;
                }
            }
            (r.good_len(), false)
        }
    };
    file.set_len(good_len).map_err(|e| io("truncating", e))?;
    file.seek(SeekFrom::End(0)).map_err(|e| io("seeking", e))?;
    let sink = if restarted {
        JsonlSink::create(file, expected)?
    } else {
        JsonlSink::append(file)
    };
    let info = ResumeInfo {
        recorded: done.len(),
        cut_bytes: size.saturating_sub(good_len),
        restarted,
    };
    Ok((done, sink, info))
}

/// What [`merge`] did.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct MergeInfo {
    /// Records written.
    pub records: u64,
    /// Identical repeats dropped.
    pub duplicates: u64,
    /// Variants of the study with no record in any input.
    pub missing: u64,
    /// Inputs that ended in a partial line (skipped).
    pub truncated_inputs: Vec<String>,
}

/// Join record files (shards, or pieces of interrupted runs) into one file
/// with the records of an unsharded run: header with no shard, records sorted
/// by index, identical duplicates dropped, differing duplicates an error.
/// Inputs are `(name, reader)`; they must share plan, variants and chain.
/// Missing variants are counted, not an error (the caller decides).
pub fn merge<R: BufRead>(
    inputs: Vec<(String, R)>,
    out: &mut impl Write,
) -> Result<MergeInfo, StudyError> {
    let mut info = MergeInfo::default();
    let mut first: Option<Header> = None;
    let mut all: BTreeMap<u64, (Record, String)> = BTreeMap::new();
    for (name, input) in inputs {
        let Some(mut reader) = RecordReader::open(input, &name)? else {
            info.truncated_inputs.push(name);
            continue;
        };
        if let Some(h) = reader.header().cloned() {
            match &first {
                None => first = Some(h),
                Some(f) => f.check(&h, &name, false)?,
            }
        }
        while let Some(rec) = reader.next_record()? {
            match all.get(&rec.index) {
                Some((old, from)) => {
                    if *old != rec {
                        return Err(StudyError::Conflict {
                            index: rec.index,
                            first: from.clone(),
                            second: name.clone(),
                        });
                    }
                    info.duplicates += 1;
                }
                None => {
                    all.insert(rec.index, (rec, name.clone()));
                }
            }
        }
        if reader.truncated() {
            info.truncated_inputs.push(name);
        }
    }
    if let Some(mut header) = first {
        header.shard = None;
        write_line(out, &header)?;
        for (rec, _) in all.values() {
            write_line(out, rec)?;
        }
        info.records = all.len() as u64;
        info.missing = header.variants.saturating_sub(info.records);
    }
    Ok(info)
}

/// Write finished records as CSV: `index`, then one column per value, per
/// metric, and `<requirement> pass` / `<requirement> margin` per requirement
/// (the union over all records, sorted by name), then `error`. Empty cells
/// where a record lacks a figure.
pub fn write_csv<'a>(
    records: impl IntoIterator<Item = &'a Record> + Clone,
    out: impl Write,
) -> Result<(), StudyError> {
    let mut values = std::collections::BTreeSet::new();
    let mut metrics = std::collections::BTreeSet::new();
    let mut verdicts = std::collections::BTreeSet::new();
    for r in records.clone() {
        values.extend(r.values.keys().cloned());
        metrics.extend(r.metrics.keys().cloned());
        verdicts.extend(r.verdicts.keys().cloned());
    }
    let layout = CsvLayout {
        values: values.into_iter().collect(),
        metrics: metrics.into_iter().collect(),
        verdicts: verdicts.into_iter().collect(),
    };
    let mut sink = CsvSink::create(out, layout)?;
    for r in records {
        sink.out.write_record(sink.layout.row(r)).map_err(csv_err)?;
    }
    sink.out.flush().map_err(|source| StudyError::Io {
        what: "writing CSV".to_string(),
        source,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// FNV-1a 64-bit test vectors (the FNV reference test suite, from
    /// memory; the same values from a direct Python transcription of the
    /// published algorithm).
    #[test]
    fn input_fingerprint_is_fnv1a_64() {
        assert_eq!(input_fingerprint(b""), "cbf29ce484222325");
        assert_eq!(input_fingerprint(b"a"), "af63dc4c8601ec8c");
        assert_eq!(input_fingerprint(b"foobar"), "85944171f73967e8");
    }
}
