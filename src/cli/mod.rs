//! The command line: flags to settings, the batch over files, the output file.
//!
//! Only this module and [`crate::import`] touch the file system.

pub mod args;
pub mod batch;
pub mod check;
mod draw;
mod explain;
pub mod memory;

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::{Instant, SystemTime};

use anyhow::{bail, Context};

use crate::analyze::Settings;
use crate::fem::TorsionSettings;
use crate::import::{LengthUnit, ReadOptions};
use crate::report::html;
use crate::report::table::utc_date_time;
use crate::report::{
    csv_header, csv_records, measure_table, write_jsonl, xlsx_bytes, CsvFormat, RunRecord, Tiers,
};
use crate::timings::{self, Step};
use args::{Cli, Command, FormatArg, LimitArgs, MeasureArgs, ReadArgs, UnitArg};

/// Exit status: every profile measured.
pub const EXIT_OK: i32 = 0;
/// Exit status: output written, but some inputs or profiles failed.
pub const EXIT_SOME_FAILED: i32 = 1;
/// Exit status: usage or I/O error before any output.
pub const EXIT_USAGE: i32 = 2;

pub(crate) fn unit(u: UnitArg) -> LengthUnit {
    match u {
        UnitArg::Mm => LengthUnit::MM,
        UnitArg::Cm => LengthUnit::CM,
        UnitArg::M => LengthUnit::M,
        UnitArg::In => LengthUnit::INCH,
    }
}

/// Run a parsed command line; returns the exit status.
pub fn run(cli: Cli) -> anyhow::Result<i32> {
    interrupt::install();
    match cli.command {
        Command::Measure(args) => measure(args),
        Command::Explain(args) => explain::explain(args),
        Command::Check(args) => check::check(args),
        Command::Draw(args) => draw::draw(args),
    }
}

fn parse_delimiter(d: Option<&str>, decimal_comma: bool) -> anyhow::Result<u8> {
    let byte = match d {
        None => return Ok(if decimal_comma { b';' } else { b',' }),
        Some("tab") | Some("\\t") => b'\t',
        Some(s) if s.len() == 1 && s.is_ascii() => s.as_bytes()[0],
        Some(s) => bail!("--delimiter takes one ASCII character or 'tab', not {s:?}"),
    };
    if decimal_comma && byte == b',' {
        bail!("--decimal-comma needs a delimiter other than ',' (e.g. --delimiter ';')");
    }
    if byte == b'"' || byte == b'\n' || byte == b'\r' {
        bail!("--delimiter cannot be a quote or a line break");
    }
    Ok(byte)
}

/// The reading settings `measure` and `explain` share, from their common options (`census`:
/// keep the layer table and entity counts, for `explain`). A bad `--gap` is a usage error.
fn read_settings(read: &ReadArgs, census: bool) -> anyhow::Result<Settings> {
    if let Some(g) = read.gap {
        if !(g.is_finite() && g >= 0.0) {
            bail!("--gap must be a length of zero or more millimetres");
        }
    }
    Ok(Settings {
        read: ReadOptions {
            layers: read.layer.clone(),
            exclude_layers: read.exclude_layer.clone(),
            include_hidden_layers: read.include_hidden_layers,
            hatch_outlines: read.hatch_outlines,
            census,
            svg_mm_per_unit: read.svg_scale,
        },
        join_gap: read.gap,
        merge: false,
        assume_units: unit(read.assume_units),
        plastic: false,
        extrusion: false,
        torsion: None,
        time_limit: None,
        max_file_bytes: crate::analyze::DEFAULT_MAX_FILE_BYTES,
    })
}

mod interrupt {
    //! Ctrl-C and SIGTERM: remove the temporary files of outputs being written, then exit
    //! with status 130 (the shell's 128 + SIGINT). Outputs already renamed into place are
    //! whole; older outputs are left as they were.

    use std::path::PathBuf;
    use std::sync::Mutex;

    static WRITING: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

    /// Exit status of an interrupted run.
    pub const EXIT_INTERRUPTED: i32 = 130;

    /// Install the handler (once; later calls, as from tests running the CLI in-process,
    /// are ignored).
    pub fn install() {
        let _ = ctrlc::set_handler(|| {
            let paths = match WRITING.lock() {
                Ok(mut w) => std::mem::take(&mut *w),
                Err(poisoned) => std::mem::take(&mut *poisoned.into_inner()),
            };
            for p in paths {
                let _ = std::fs::remove_file(p);
            }
            eprintln!("sectio: interrupted; no output written");
            std::process::exit(EXIT_INTERRUPTED);
        });
    }

    /// The temporary files listed now.
    #[cfg(test)]
    pub fn writing() -> Vec<PathBuf> {
        WRITING.lock().map(|w| w.clone()).unwrap_or_default()
    }

    /// A temporary file being written, listed for the handler until dropped. The lock is
    /// held while the list changes, so the handler never misses a file created before it ran.
    pub struct Registered(PathBuf);

    impl Registered {
        /// Create a temporary file with `create` and list it, under the lock: an interrupt
        /// arriving meanwhile waits, then finds the file listed.
        pub fn create(
            create: impl FnOnce() -> std::io::Result<tempfile::NamedTempFile>,
        ) -> std::io::Result<(tempfile::NamedTempFile, Registered)> {
            let mut w = WRITING.lock().unwrap_or_else(|p| p.into_inner());
            let file = create()?;
            let path = file.path().to_path_buf();
            w.push(path.clone());
            Ok((file, Registered(path)))
        }
    }

    impl Drop for Registered {
        fn drop(&mut self) {
            if let Ok(mut w) = WRITING.lock() {
                w.retain(|p| p != &self.0);
            }
        }
    }
}

/// `settings` with the batch limits of `limits`.
fn with_limits(settings: Settings, limits: &LimitArgs) -> Settings {
    Settings {
        time_limit: limits.time_limit,
        max_file_bytes: limits.max_file_size << 20,
        ..settings
    }
}

/// The safety caution every output that lists properties carries.
pub(crate) const CAUTION: &str = "Geometric properties of the outline as drawn; not a strength check; member design follows the applicable code and a qualified engineer.";

/// The output format: `--format`, else from the extension of `-o` (`.xlsx`; `.jsonl` or
/// `.ndjson`; anything else CSV), else CSV. An .xlsx workbook needs `-o`, and options that
/// only shape CSV text (`csv_flag`, the first one given) do not apply to the others: usage
/// errors.
pub(crate) fn output_format(
    format: Option<FormatArg>,
    output: Option<&Path>,
    csv_flag: Option<&str>,
) -> anyhow::Result<FormatArg> {
    let by_extension = || {
        let ext = output
            .and_then(Path::extension)
            .map(|e| e.to_string_lossy().to_ascii_lowercase());
        match ext.as_deref() {
            Some("xlsx") => FormatArg::Xlsx,
            Some("jsonl") | Some("ndjson") => FormatArg::Jsonl,
            _ => FormatArg::Csv,
        }
    };
    let format = format.unwrap_or_else(by_extension);
    let name = match format {
        FormatArg::Csv => return Ok(format),
        FormatArg::Jsonl => "jsonl",
        FormatArg::Xlsx => "xlsx",
    };
    if format == FormatArg::Xlsx && output.is_none() {
        bail!("--format xlsx writes a workbook, not text: give a file with -o (e.g. -o sections.xlsx)");
    }
    if let Some(flag) = csv_flag {
        bail!("{flag} applies to CSV output only, not to {name} (numbers there are numbers, not text)");
    }
    Ok(format)
}

/// The settings of a measurement: the reading settings with `merge` and the optional tiers
/// (`torsion` the solver's settings when that tier is on).
pub(crate) fn measure_settings(
    read: Settings,
    merge: bool,
    tiers: Tiers,
    torsion: TorsionSettings,
) -> Settings {
    Settings {
        merge,
        plastic: tiers.plastic,
        extrusion: tiers.extrusion,
        torsion: tiers.torsion.then_some(torsion),
        ..read
    }
}

/// `text` as one word for a POSIX shell: unchanged when it holds only characters no shell
/// treats specially, else in single quotes (a quote inside as `'\''`).
fn shell_word(text: &str) -> String {
    let plain = !text.is_empty()
        && text
            .chars()
            .all(|c| c.is_alphanumeric() || "-_./:=+,@%".contains(c));
    if plain {
        text.to_string()
    } else {
        format!("'{}'", text.replace('\'', "'\\''"))
    }
}

/// The command line this process was started with, quoted for a shell where needed.
pub(crate) fn command_line() -> String {
    std::env::args_os()
        .map(|a| shell_word(&a.to_string_lossy()))
        .collect::<Vec<_>>()
        .join(" ")
}

/// The run record of any command: tool, version, command line, date and time (UTC).
pub(crate) fn run_record_start() -> RunRecord {
    let mut run = RunRecord::default();
    run.push("tool", "sectio");
    run.push("version", env!("CARGO_PKG_VERSION"));
    run.push("command line", command_line());
    run.push("date (UTC)", utc_date_time(SystemTime::now()));
    run
}

/// The run record of `measure`.
fn measure_run_record(args: &MeasureArgs, format: &CsvFormat, files: &[PathBuf]) -> RunRecord {
    let mut run = run_record_start();
    run.push("units", format.unit.name);
    run.push("density", args.mass.describe(format.density_kg_m3));
    run.push("files", files.len().to_string());
    for f in files {
        run.push("input", f.display().to_string());
    }
    run.push("caution", CAUTION);
    run
}

fn measure(args: MeasureArgs) -> anyhow::Result<i32> {
    let started = Instant::now();
    if args.timings {
        timings::enable();
    }
    let csv_flag = if args.delimiter.is_some() {
        Some("--delimiter")
    } else {
        args.decimal_comma.then_some("--decimal-comma")
    };
    let output_format = output_format(args.format, args.output.as_deref(), csv_flag)?;
    let delimiter = parse_delimiter(args.delimiter.as_deref(), args.decimal_comma)?;
    let density = args.mass.density_kg_m3().map_err(anyhow::Error::msg)?;
    let read = with_limits(read_settings(&args.read, false)?, &args.limits);
    let files = batch::collect_files(&args.paths)?;
    if files.is_empty() {
        bail!("no .dxf or .svg files found in the given paths");
    }
    let tiers = if args.all {
        Tiers::ALL
    } else {
        Tiers {
            plastic: args.plastic,
            extrusion: args.extrusion,
            torsion: args.torsion,
        }
    };
    let settings = measure_settings(
        read,
        args.merge,
        tiers,
        TorsionSettings {
            accuracy: args.torsion_accuracy,
            max_nodes: args.torsion_max_nodes,
        },
    );
    let format = CsvFormat {
        unit: unit(args.units),
        delimiter,
        decimal_comma: args.decimal_comma,
        density_kg_m3: density,
        tiers,
    };
    // CSV and JSON Lines without a report stream: each file's lines are formatted on its
    // worker thread and written in file order as soon as they and those before them are
    // done, so memory does not grow with the number of files. A workbook or a report needs
    // every row at the end: then the rows (and the report's parts, built on the worker
    // threads from each file's geometry, which is then dropped) are collected.
    let csv = output_format == FormatArg::Csv;
    let mut tally = Tally::default();
    if args.report.is_none() && output_format != FormatArg::Xlsx {
        let per_file = |path: &Path| {
            let rows = batch::measure_file(path, &settings);
            let lines = timings::time(Step::Output, || {
                if csv {
                    csv_records(&rows, &format)
                } else {
                    let mut v = Vec::new();
                    write_jsonl(&mut v, &measure_table(&rows, &format)).map(|_| v)
                }
            });
            (Tally::of(&rows), lines)
        };
        // When the workers are done: what is left of the output (the last rows, the
        // flush, and for a file its `fsync` and rename) counts as output too.
        let mut rows_done: Option<Instant> = None;
        let mut write = |w: &mut dyn Write, tally: &mut Tally| -> std::io::Result<()> {
            if csv {
                w.write_all(&csv_header(&format)?)?;
            }
            batch::stream_batch(&files, args.jobs, per_file, |(t, lines)| {
                tally.add(t);
                let start = Instant::now();
                let written = w.write_all(&lines?);
                timings::add(Step::Output, start.elapsed());
                written
            })
            .map_err(std::io::Error::other)?;
            rows_done = Some(Instant::now());
            w.flush()
        };
        let written = match &args.output {
            Some(path) => write_atomically(path, |w| write(w, &mut tally))
                .with_context(|| format!("cannot write {}", path.display())),
            None => {
                let stdout = std::io::stdout();
                let mut lock = stdout.lock();
                write(&mut lock, &mut tally).context("cannot write to standard output")
            }
        };
        if let Some(t) = rows_done {
            timings::add(Step::Output, t.elapsed());
        }
        written?;
        return Ok(finish_measure(&args, &tally, files.len(), started));
    }
    let batch = match &args.report {
        None => batch::run_batch(&files, &settings, args.jobs, |_| (None, None))?,
        Some(_) => {
            let numbers: std::collections::HashMap<&Path, usize> = files
                .iter()
                .enumerate()
                .map(|(k, f)| (f.as_path(), k + 1))
                .collect();
            batch::run_batch_with(&files, args.jobs, |path| {
                let (rows, geometry) = batch::measure_file_with_geometry(path, &settings);
                let file_no = numbers.get(path).copied().unwrap_or(0);
                let (fragment, records) = timings::time(Step::Output, || {
                    (
                        html::file_fragment(file_no, &rows, geometry.as_ref(), &format, None),
                        csv.then(|| csv_records(&rows, &format)),
                    )
                });
                (rows, (records, Some(fragment)))
            })?
        }
    };
    let rows = batch.rows;
    let writing = Instant::now();
    let xlsx = match output_format {
        FormatArg::Xlsx => {
            let run = measure_run_record(&args, &format, &files);
            Some(xlsx_bytes(&[measure_table(&rows, &format)], &run)?)
        }
        _ => None,
    };
    let write = |w: &mut dyn Write| -> std::io::Result<()> {
        match (&xlsx, output_format) {
            (Some(workbook), _) => w.write_all(workbook)?,
            (None, FormatArg::Jsonl) => write_jsonl(w, &measure_table(&rows, &format))?,
            (None, _) => {
                w.write_all(&csv_header(&format)?)?;
                for chunk in batch.rendered.iter().filter_map(|(c, _)| c.as_ref()) {
                    w.write_all(
                        chunk
                            .as_ref()
                            .map_err(|e| std::io::Error::new(e.kind(), e.to_string()))?,
                    )?;
                }
            }
        }
        w.flush()
    };
    match &args.output {
        Some(path) => write_atomically(path, |w| write(w))
            .with_context(|| format!("cannot write {}", path.display()))?,
        None => {
            let stdout = std::io::stdout();
            let mut lock = stdout.lock();
            write(&mut lock).context("cannot write to standard output")?;
        }
    }
    if let Some(path) = &args.report {
        let run = measure_run_record(&args, &format, &files);
        let fragments: Vec<&html::Fragment> = batch
            .rendered
            .iter()
            .filter_map(|(_, f)| f.as_ref())
            .collect();
        write_atomically(path, |w| {
            html::write_page(w, &run, &format, &fragments, None)
        })
        .with_context(|| format!("cannot write {}", path.display()))?;
    }
    timings::add(Step::Output, writing.elapsed());
    let mut start = 0;
    while start < rows.len() {
        let file = &rows[start].file;
        let end = start + rows[start..].iter().take_while(|r| &r.file == file).count();
        tally.add(Tally::of(&rows[start..end]));
        start = end;
    }
    Ok(finish_measure(&args, &tally, files.len(), started))
}

/// What the closing summary counts: rows, error rows, and files with an error row.
#[derive(Debug, Clone, Copy, Default)]
struct Tally {
    rows: usize,
    errors: usize,
    failed_files: usize,
}

impl Tally {
    /// The tally of one file's rows.
    fn of(rows: &[crate::report::Row]) -> Tally {
        let errors = rows.iter().filter(|r| r.outcome.result.is_err()).count();
        Tally {
            rows: rows.len(),
            errors,
            failed_files: usize::from(errors > 0),
        }
    }

    fn add(&mut self, t: Tally) {
        self.rows += t.rows;
        self.errors += t.errors;
        self.failed_files += t.failed_files;
    }
}

/// The timings table (with `--timings`), the closing summary on standard error, and the
/// exit status.
fn finish_measure(args: &MeasureArgs, tally: &Tally, files: usize, started: Instant) -> i32 {
    if args.timings {
        eprint!(
            "{}",
            timings::render(
                started.elapsed(),
                args.jobs.unwrap_or_else(rayon::current_num_threads),
                files
            )
        );
    }
    eprintln!(
        "sectio: {} files, {} profiles measured, {} errors{}, {:.2} s",
        files,
        tally.rows - tally.errors,
        tally.errors,
        if tally.errors > 0 {
            format!(" in {} files", tally.failed_files)
        } else {
            String::new()
        },
        started.elapsed().as_secs_f64()
    );
    if tally.errors > 0 {
        EXIT_SOME_FAILED
    } else {
        EXIT_OK
    }
}

/// Write to a temporary file beside `path`, then rename it over `path`: readers never see
/// a half-written file, and a failed run leaves the old file (or none). The temporary file
/// is registered with [`interrupt`] while it exists, so that an interrupted run (Ctrl-C,
/// SIGTERM) removes it: no partial output is left behind.
pub fn write_atomically(
    path: &Path,
    write: impl FnOnce(&mut std::io::BufWriter<EarlyWriteback<'_>>) -> std::io::Result<()>,
) -> anyhow::Result<()> {
    // A device or a pipe (`-o /dev/null`, `/dev/stdout`, a FIFO) is written in place:
    // renaming a temporary file over it would replace the device with a plain file.
    if std::fs::metadata(path).is_ok_and(|m| !m.is_file() && !m.is_dir()) {
        let mut file = std::fs::OpenOptions::new().write(true).open(path)?;
        let mut w = std::io::BufWriter::new(EarlyWriteback::in_place(&mut file));
        write(&mut w)?;
        w.flush()?;
        return Ok(());
    }
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    let mut builder = tempfile::Builder::new();
    builder.prefix(".sectio-").suffix(".tmp");
    // A new output is created as any file is (read-write for all, less the umask), not
    // owner-only as a temporary file would be; a replaced one keeps its permissions.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        builder.permissions(std::fs::Permissions::from_mode(0o666));
    }
    let (mut tmp, _registered) = interrupt::Registered::create(|| builder.tempfile_in(dir))?;
    if let Ok(old) = std::fs::metadata(path) {
        if old.is_file() {
            tmp.as_file().set_permissions(old.permissions()).ok();
        }
    }
    {
        let mut w = std::io::BufWriter::new(EarlyWriteback::new(tmp.as_file_mut()));
        write(&mut w)?;
        w.flush()?;
    }
    tmp.as_file().sync_all().ok();
    tmp.persist(path)?;
    Ok(())
}

/// The file [`write_atomically`] writes through: it asks the system to start writing what
/// has been written so far to disk each time another [`EarlyWriteback::STEP`] bytes have come
/// (on Linux, `sync_file_range` with `SYNC_FILE_RANGE_WRITE`, which starts the writes and
/// returns without waiting for them), so that the `fsync` before the rename finds most of
/// the file on disk already and waits only for its last part. `measure` over a large folder
/// writes each run of finished files' rows as it comes (see [`batch::stream_batch`]), so the
/// disk works while the run goes on; where the rows all come at the end (a few files, taken
/// up largest first), the first of them are on their way while the rest are written. On the
/// catalog benchmark set (20 sheets, 2 MB of rows at the end) the final `fsync` took
/// 1.7-2.4 ms, and 0.4-1.2 ms with the writes started as they come (`strace -T`). It is a
/// hint only: the `fsync` is what makes the file durable, and a failed hint changes nothing.
/// Elsewhere it only writes.
pub struct EarlyWriteback<'a> {
    file: &'a mut std::fs::File,
    /// Bytes written so far.
    written: u64,
    /// How many of them the system has been asked to write out; `None` when the file is
    /// written in place (a device or a pipe).
    started: Option<u64>,
}

impl<'a> EarlyWriteback<'a> {
    /// Bytes between two requests to start writing out.
    const STEP: u64 = 256 << 10;

    fn new(file: &'a mut std::fs::File) -> Self {
        EarlyWriteback {
            file,
            written: 0,
            started: Some(0),
        }
    }

    /// For a device or a pipe: no requests.
    fn in_place(file: &'a mut std::fs::File) -> Self {
        EarlyWriteback {
            file,
            written: 0,
            started: None,
        }
    }
}

impl Write for EarlyWriteback<'_> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let n = self.file.write(buf)?;
        self.written += n as u64;
        if let Some(started) = self.started {
            if self.written - started >= Self::STEP {
                start_writing_out(self.file, started, self.written - started);
                self.started = Some(self.written);
            }
        }
        Ok(n)
    }

    fn flush(&mut self) -> std::io::Result<()> {
        self.file.flush()
    }
}

/// Ask the system to start writing `len` bytes of `file` from `offset` to disk, without
/// waiting for them (Linux: `sync_file_range(2)` with `SYNC_FILE_RANGE_WRITE`). Errors are
/// ignored: a file system that cannot do it (or a file that is not on a disk) is written out
/// by the `fsync` that follows anyway.
#[cfg(target_os = "linux")]
fn start_writing_out(file: &std::fs::File, offset: u64, len: u64) {
    use std::os::fd::AsRawFd;
    let (Ok(offset), Ok(len)) = (
        libc::off64_t::try_from(offset),
        libc::off64_t::try_from(len),
    ) else {
        return;
    };
    // SAFETY: a plain system call on a file descriptor that `file` keeps open for the
    // length of the call; it reads and writes no memory of this process.
    unsafe {
        libc::sync_file_range(file.as_raw_fd(), offset, len, libc::SYNC_FILE_RANGE_WRITE);
    }
}

/// Elsewhere: nothing (the `fsync` before the rename writes the file out).
#[cfg(not(target_os = "linux"))]
fn start_writing_out(_file: &std::fs::File, _offset: u64, _len: u64) {}

#[cfg(test)]
mod tests {
    use super::{shell_word, write_atomically};

    #[test]
    fn shell_words_are_quoted_where_needed() {
        assert_eq!(shell_word("measure"), "measure");
        assert_eq!(shell_word("--units=cm"), "--units=cm");
        assert_eq!(shell_word("drawings/HV-204.dxf"), "drawings/HV-204.dxf");
        assert_eq!(shell_word("Größe.dxf"), "Größe.dxf");
        assert_eq!(shell_word(""), "''");
        assert_eq!(shell_word("my drawings"), "'my drawings'");
        assert_eq!(shell_word("*.dxf"), "'*.dxf'");
        assert_eq!(shell_word("$HOME"), "'$HOME'");
        assert_eq!(shell_word("it's"), "'it'\\''s'");
    }

    /// While an output is being written its temporary file is listed for the interrupt
    /// handler (which removes what is listed), and only then.
    #[test]
    fn the_interrupt_handler_sees_the_file_being_written() {
        use std::io::Write;
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("out.csv");
        let listed = || -> Vec<std::path::PathBuf> {
            super::interrupt::writing()
                .into_iter()
                .filter(|p| p.starts_with(dir.path()))
                .collect()
        };
        write_atomically(&path, |w| {
            let now = listed();
            assert_eq!(now.len(), 1, "{now:?}");
            assert!(now[0].exists(), "the listed file is the one being written");
            assert!(now[0]
                .file_name()
                .is_some_and(|n| n.to_string_lossy().starts_with(".sectio-")));
            w.write_all(b"x\n")
        })
        .expect("write");
        assert!(listed().is_empty());
        // A failed write is unlisted too, and leaves nothing.
        let failed = write_atomically(&path, |_| Err(std::io::Error::other("disk full")));
        assert!(failed.is_err());
        assert!(listed().is_empty());
        assert_eq!(std::fs::read_dir(dir.path()).expect("dir").count(), 1);
    }

    /// An output of many pieces arrives whole, and the system is asked to start writing it
    /// out each time another step of it has come (and never for a pipe or a device).
    #[test]
    fn a_large_output_arrives_whole_with_its_writes_started_along_the_way() {
        use super::EarlyWriteback;
        use std::io::Write;
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("out.csv");
        // About 1.2 MB in pieces of uneven sizes, each byte telling where it is.
        let bytes: Vec<u8> = (0..1_234_567u32).map(|i| (i % 251) as u8).collect();
        let mut requests = Vec::new();
        write_atomically(&path, |w| {
            for piece in bytes.chunks(77_777) {
                w.write_all(piece)?;
                requests.push(w.get_ref().started);
            }
            Ok(())
        })
        .expect("write");
        assert_eq!(std::fs::read(&path).expect("read"), bytes);
        // Written out up to 311 108 bytes (4 pieces) after the fourth piece, and so on: each
        // request covers at least a step, and what is left after the last is less than one
        // step and a piece.
        let step = EarlyWriteback::STEP;
        let starts: Vec<u64> = requests.iter().map(|s| s.expect("a file")).collect();
        assert!(starts
            .windows(2)
            .all(|w| w[1] == w[0] || w[1] - w[0] >= step));
        assert_eq!(starts[3], 4 * 77_777);
        let last = starts.last().expect("a request after each piece");
        assert!(bytes.len() as u64 - last < step + 77_777);
        // A file opened in place (as a device or a pipe is) gets no requests.
        let mut file = std::fs::File::create(dir.path().join("plain")).expect("create");
        let mut in_place = EarlyWriteback::in_place(&mut file);
        in_place.write_all(&bytes).expect("write");
        assert_eq!(in_place.started, None);
    }

    /// A pipe or device given as the output is written in place, never replaced by a file
    /// (as root, renaming over `/dev/null` would turn it into a plain file).
    #[cfg(unix)]
    #[test]
    fn a_pipe_as_output_is_written_in_place() {
        use std::io::Write;
        use std::os::unix::fs::FileTypeExt;
        let dir = tempfile::tempdir().expect("temp dir");
        let fifo = dir.path().join("pipe");
        let made = std::process::Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .expect("mkfifo");
        assert!(made.success());
        let reader = {
            let fifo = fifo.clone();
            std::thread::spawn(move || std::fs::read(fifo).expect("read the pipe"))
        };
        write_atomically(&fifo, |w| w.write_all(b"rows\n")).expect("write");
        assert_eq!(reader.join().expect("reader"), b"rows\n");
        let kind = std::fs::symlink_metadata(&fifo).expect("meta").file_type();
        assert!(kind.is_fifo(), "still a pipe");
        assert_eq!(std::fs::read_dir(dir.path()).expect("dir").count(), 1);
    }

    /// Outputs are created like any file (0666 less the umask), not owner-only like the
    /// temporary file they are written through; a replaced file keeps its permissions.
    #[cfg(target_os = "linux")]
    #[test]
    fn written_files_get_ordinary_permissions() {
        use std::io::Write;
        use std::os::unix::fs::PermissionsExt;
        let umask = std::fs::read_to_string("/proc/self/status")
            .ok()
            .and_then(|s| {
                s.lines()
                    .find_map(|l| l.strip_prefix("Umask:"))
                    .and_then(|v| u32::from_str_radix(v.trim(), 8).ok())
            })
            .expect("umask from /proc/self/status");
        let dir = tempfile::tempdir().expect("temp dir");
        let path = dir.path().join("out.csv");
        let mode = |p: &std::path::Path| std::fs::metadata(p).expect("meta").permissions().mode();
        write_atomically(&path, |w| w.write_all(b"a\n")).expect("write");
        assert_eq!(mode(&path) & 0o777, 0o666 & !umask);
        std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o640)).expect("chmod");
        write_atomically(&path, |w| w.write_all(b"b\n")).expect("rewrite");
        assert_eq!(mode(&path) & 0o777, 0o640);
        assert_eq!(std::fs::read(&path).expect("read"), b"b\n");
    }
}
