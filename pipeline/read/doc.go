// Package read turns one recorder file into a pipeline.Recording.
//
// File picks the reader: a RIFF/WAVE header or a leading universal-file
// "-1" delimiter line decide whatever the extension; otherwise the
// extension (.csv .txt .tsv .dat: CSV; .wav: WAV; .uff .unv .uf58 .uff58:
// UFF dataset 58); otherwise text is read as CSV and anything else is an
// unknown format. CSV, WAV and UFF58 read from an io.Reader; the name they
// are given is used in errors and as Recording.Path.
//
// # CSV
//
// Optional lines "# key: value" before the header are metadata: keys are
// lower-cased and trimmed and kept in Recording.Meta. The reader itself
// uses sample_rate (also "sample rate", fs, sampling_rate; "2048",
// "2048 Hz", "25.6 kHz"), dt or sample_interval (seconds, or "0.5 ms"),
// and full_scale or range (the measuring range of the response channels,
// Channel.FullScale); everything else, e.g. window_tau, passes through.
// Other "#" lines are comments.
//
// The header names the columns; a unit in brackets or parentheses,
// "accel [m/s^2]" or "accel (g)", becomes Channel.Unit. The delimiter is
// taken from the header: tab, else semicolon, else comma. With tab or
// semicolon a decimal comma is accepted ("0,125;-3,5"). A column named
// time, t, time_s, seconds, sec (with no unit or s, ms, us) is the time
// axis: it gives the sample rate and is not returned as a channel. Its
// steps must be even: a step may differ from the mean step by
// Options.TimeTolerance (default 1e-3) of it plus the rounding of the
// printed times (the reader learns how many decimals and significant
// digits they were printed with); when the times are printed exactly and
// every step is a whole multiple of the usual one, any longer step is a
// gap. The rate from the time column is snapped to whole Hz when that is
// within the printing's resolution. When the file has both, time column
// and metadata must agree. Options.SampleRate is used only when the file
// has no rate.
//
// Blank lines and "#" lines among the data are skipped; cells may be
// quoted and padded with spaces; a trailing delimiter on every line is
// accepted. The file is read in one streaming pass; numbers of the usual
// shape are converted without allocating (an exact fast path, strconv
// otherwise), and memory is linear in the number of samples.
//
// # WAV
//
// RIFF/WAVE with PCM 8, 16, 24 or 32 bits, IEEE float 32 or 64 bits, plain
// or WAVE_FORMAT_EXTENSIBLE, any number of channels. Chunks other than
// "fmt " and "data" are skipped (with their pad byte). PCM is scaled to
// [-1, 1): the code 2^(bits-1) reads 1, so a full-scale PCM channel has
// FullScale 1 (before sensitivity). WAV has no units and no names: names
// come from Options.Names (one per channel) or are ch1..chN.
//
// # UFF dataset 58
//
// The ASCII and binary (58b) function records of the universal file
// format; see the comment in uff58.go for the layout as this package
// reads it. Every time-response record with real data and even abscissa
// spacing becomes a channel; the sample rate is 1/(abscissa increment),
// snapped to whole Hz within the six printed digits of the increment.
// Other datasets are skipped; unusable dataset 58 records (spectra, FRFs,
// complex or uneven data) are listed in Meta["uff_skipped"]. Record
// header fields go to Meta as "<channel>.<field>" (id1..id5,
// function_type, response_node, response_direction, ...).
//
// # Channels
//
// Options.Sensitivity divides the raw values of a named channel (and its
// FullScale). One channel at most is the force channel
// (pipeline.RoleForce): Options.ForceChannel, else a UFF record whose
// ordinate is "excitation force", else the first channel whose name
// contains force, hammer, load or impact (any case); Options.NoForce turns
// this off. All other channels are responses. On success every channel
// has the same length > 0 and sample rate > 0 and holds no NaN or Inf.
//
// # Errors
//
// Every reader error is an *Error: it names the file, the 1-based line
// (text formats) or the byte offset (binary data) when they apply, and
// the problem in plain words, e.g.
//
//	hit-003.csv: line 17: non-numeric cell "1.2x" in column "accel"
//	hit-004.wav: byte 20044: truncated data chunk: it declares 40000 bytes from byte 44, ...
//
// Input that is none of the formats wraps ErrUnknownFormat (errors.Is);
// I/O errors are wrapped as Err. No input makes a reader panic: the fuzz
// targets FuzzCSV, FuzzWAV and FuzzUFF58 check that.
//
// # Writers
//
// WriteCSV, WriteWAV and WriteUFF58 write recordings that the readers
// read back (tests, the demo, the sample files in testdata/read and the
// fuzz corpora).
package read
