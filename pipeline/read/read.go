package read

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"unicode/utf8"

	"github.com/ringlog/ringlog/pipeline"
)

// Options tell the readers what the file itself may not say.
type Options struct {
	// SampleRate in Hz is used when the file gives none (a CSV file
	// without time column or sample-rate metadata). A rate in the file
	// always wins.
	SampleRate float64
	// Names are the channel names of a WAV file (or of the usable
	// records of a UFF file), in file order. When set, their number must
	// match the file's channels. Without them WAV channels are
	// "ch1".."chN".
	Names []string
	// Sensitivity divides the raw value of the named channel (volts per
	// unit, counts per unit, ...). Missing names read 1. Names that the
	// file does not have are ignored, so one map can serve many files.
	Sensitivity map[string]float64
	// ForceChannel names the force (hammer) channel. Empty: a UFF record
	// whose ordinate is "excitation force", else the first channel whose
	// name contains force, hammer, load or impact (any case), else none.
	// A name that the file does not have is an error.
	ForceChannel string
	// NoForce treats every channel as a response channel.
	NoForce bool
	// TimeTolerance is the allowed relative deviation of a CSV time step
	// from the first step, on top of the rounding of the printed time
	// values. Zero means 1e-3.
	TimeTolerance float64
}

// The sample rates a recording may have. Outside them every time and
// frequency the analysis derives is meaningless or not even finite (a
// rate of 4.9e-324 Hz gives a zero spectral bin width, 1e-306 Hz an
// infinite duration); real recorders sample between a few hertz and a
// few megahertz.
const (
	MinSampleRate = 1e-3 // Hz
	MaxSampleRate = 1e9  // Hz
)

// MaxChannels is the most channels (CSV columns besides time, WAV
// channels, UFF records) a file may have. Impact tests record a hammer and
// a few to a few hundred responses; each channel costs its own buffers and
// analysis, so a file with tens of thousands (a spreadsheet's one long row,
// a broken header) is refused with a clear error rather than taking
// gigabytes.
const MaxChannels = 1024

// forceWords are the name parts that mark a force channel by default.
var forceWords = []string{"force", "hammer", "load", "impact"}

// finish assigns roles, applies sensitivities and checks what every
// reader promises: at least one channel, equal lengths > 0, a finite
// sample rate > 0. forceHint marks channels the file itself calls force.
func finish(rec *pipeline.Recording, opt Options, forceHint []bool) error {
	name := rec.Path
	for k, v := range rec.Meta {
		if ck := Clip(k, MaxMetaKey); ck != k {
			delete(rec.Meta, k)
			rec.Meta[ck] = Clip(v, MaxMetaText)
		} else if len(v) > MaxMetaText {
			rec.Meta[k] = Clip(v, MaxMetaText)
		}
	}
	if len(rec.Channels) == 0 {
		return fileErr(name, nil, "no channels")
	}
	if len(rec.Channels) > MaxChannels {
		return fileErr(name, nil, "%d channels; at most %d channels are read", len(rec.Channels), MaxChannels)
	}
	n := len(rec.Channels[0].Samples)
	for i := range rec.Channels {
		rec.Channels[i].Name = Clip(rec.Channels[i].Name, MaxName)
		rec.Channels[i].Unit = Clip(rec.Channels[i].Unit, MaxName)
	}
	seen := make(map[string]bool, len(rec.Channels))
	for i := range rec.Channels {
		if seen[rec.Channels[i].Name] {
			return fileErr(name, nil, "two channels named %q", rec.Channels[i].Name)
		}
		seen[rec.Channels[i].Name] = true
	}
	for i := range rec.Channels {
		c := &rec.Channels[i]
		if len(c.Samples) == 0 {
			return fileErr(name, nil, "channel %q has no samples", c.Name)
		}
		if len(c.Samples) != n {
			return fileErr(name, nil, "channel %q has %d samples, channel %q has %d", c.Name, len(c.Samples), rec.Channels[0].Name, n)
		}
		if !(c.SampleRate > 0) || math.IsInf(c.SampleRate, 0) {
			return fileErr(name, nil, "sample rate %g Hz of channel %q is not a positive finite number", c.SampleRate, c.Name)
		}
		if c.SampleRate < MinSampleRate || c.SampleRate > MaxSampleRate {
			return fileErr(name, nil, "sample rate %g Hz of channel %q is outside %g to %g Hz, the range this reader accepts (a wrong unit or a broken header?)",
				c.SampleRate, c.Name, MinSampleRate, MaxSampleRate)
		}
	}
	// Roles.
	force := -1
	switch {
	case opt.NoForce:
	case opt.ForceChannel != "":
		for i := range rec.Channels {
			if rec.Channels[i].Name == opt.ForceChannel {
				force = i
				break
			}
		}
		if force < 0 {
			for i := range rec.Channels {
				if strings.EqualFold(rec.Channels[i].Name, opt.ForceChannel) {
					force = i
					break
				}
			}
		}
		if force < 0 {
			names := make([]string, len(rec.Channels))
			for i := range rec.Channels {
				names[i] = rec.Channels[i].Name
			}
			return fileErr(name, nil, "force channel %q not found; the file has %q", opt.ForceChannel, names)
		}
	default:
		for i, f := range forceHint {
			if f && i < len(rec.Channels) {
				force = i
				break
			}
		}
		if force < 0 && rec.Format == FormatWAV && len(opt.Names) == 0 && len(rec.Channels) >= 2 {
			// A WAV file names no channel: take the impulsive one (the
			// hammer) as the force, and say so in the metadata.
			if i, note := impulsiveChannel(rec.Channels); i >= 0 {
				force = i
				if rec.Meta == nil {
					rec.Meta = map[string]string{}
				}
				rec.Meta["force_channel_picked"] = note
			}
		}
		if force < 0 {
		search:
			for i := range rec.Channels {
				low := strings.ToLower(rec.Channels[i].Name)
				for _, w := range forceWords {
					if strings.Contains(low, w) {
						force = i
						break search
					}
				}
			}
		}
	}
	for i := range rec.Channels {
		if i == force {
			rec.Channels[i].Role = pipeline.RoleForce
		} else {
			rec.Channels[i].Role = pipeline.RoleResponse
		}
	}
	// Sensitivities.
	for i := range rec.Channels {
		c := &rec.Channels[i]
		s, ok := opt.Sensitivity[c.Name]
		if !ok || s == 1 {
			continue
		}
		if s == 0 || math.IsNaN(s) || math.IsInf(s, 0) {
			return fileErr(name, nil, "sensitivity %g for channel %q must be a non-zero finite number", s, c.Name)
		}
		for k, v := range c.Samples {
			c.Samples[k] = v / s
		}
		c.FullScale /= math.Abs(s)
	}
	for i := range rec.Channels {
		c := &rec.Channels[i]
		for k, v := range c.Samples {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fileErr(name, nil, "channel %q sample %d is %g", c.Name, k, v)
			}
		}
	}
	return nil
}

// Format names returned in Recording.Format.
const (
	FormatCSV    = "csv"
	FormatWAV    = "wav"
	FormatUFF58  = "uff58"
	FormatUFF58b = "uff58b"
)

// File reads one recorder file. A RIFF/WAVE header or a leading UFF
// "-1" delimiter line decide the format whatever the extension; otherwise
// the extension does (.csv .txt .tsv .dat: CSV; .wav: WAV; .uff .unv .uf58
// .uff58: UFF dataset 58), and a file with another extension is read as
// CSV when its first bytes are text. Anything else is an *Error wrapping
// ErrUnknownFormat.
func File(path string, opt Options) (*pipeline.Recording, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fileErr(path, err, "cannot open")
	}
	defer f.Close()
	var size int64 = -1
	if st, err := f.Stat(); err == nil && st.Mode().IsRegular() {
		size = st.Size()
	}
	br := bufio.NewReaderSize(f, bufSize)
	head, err := br.Peek(sniffLen)
	if err != nil && err != io.EOF && err != bufio.ErrBufferFull {
		return nil, fileErr(path, err, "cannot read")
	}
	if len(head) == 0 {
		return nil, fileErr(path, nil, "empty file")
	}
	return dispatch(br, head, path, opt, size)
}

// dispatch reads br, whose first bytes are head, with the reader Sniff
// chooses.
func dispatch(br *bufio.Reader, head []byte, path string, opt Options, size int64) (*pipeline.Recording, error) {
	switch Sniff(head, path) {
	case FormatCSV:
		return readCSV(br, path, opt, size)
	case FormatWAV:
		return readWAV(br, path, opt, size)
	case FormatUFF58:
		return UFF58(br, path, opt)
	}
	return nil, fileErr(path, ErrUnknownFormat, "unknown format: not a WAV (RIFF/WAVE), universal file (dataset 58) or delimited text file; first bytes %s", hexHead(head))
}

const (
	bufSize  = 256 << 10
	sniffLen = 1024
)

// Sniff returns the format File would use for a file whose first bytes
// are head (up to 1 KiB is enough) and whose name is path: "csv", "wav",
// "uff58", or "" when it does not know.
func Sniff(head []byte, path string) string {
	if len(head) >= 4 {
		switch string(head[:4]) {
		case "RIFF", "RIFX", "RF64":
			if len(head) >= 12 && string(head[8:12]) == "WAVE" {
				return FormatWAV
			}
		}
	}
	if looksUFF(head) {
		return FormatUFF58
	}
	switch strings.ToLower(filepath.Ext(path)) {
	case ".csv", ".txt", ".tsv", ".dat":
		return FormatCSV
	case ".wav", ".wave":
		return FormatWAV
	case ".uff", ".unv", ".uf58", ".uff58":
		return FormatUFF58
	}
	if looksText(head) {
		return FormatCSV
	}
	return ""
}

// looksUFF reports whether the first non-blank line is the "-1"
// delimiter of a universal file.
func looksUFF(head []byte) bool {
	for len(head) > 0 {
		i := bytes.IndexByte(head, '\n')
		line := head
		if i >= 0 {
			line, head = head[:i], head[i+1:]
		} else {
			head = nil
		}
		t := bytes.TrimSpace(line)
		if len(t) == 0 {
			continue
		}
		return string(t) == "-1"
	}
	return false
}

// looksText reports whether b has no control bytes other than tab, CR and
// LF. Bytes >= 0x80 are allowed (UTF-8 or a Latin-1 code page).
func looksText(b []byte) bool {
	if len(b) == 0 {
		return false
	}
	for _, c := range b {
		if isControl(c) {
			return false
		}
	}
	return true
}

func isControl(c byte) bool {
	return (c < 0x20 && c != '\t' && c != '\r' && c != '\n') || c == 0x7f
}

// hexHead shows the first bytes of a file for an error message.
func hexHead(b []byte) string {
	if len(b) > 8 {
		b = b[:8]
	}
	return fmt.Sprintf("% x", b)
}

// toUTF8 returns b as a string, decoding it as Latin-1 when it is not
// valid UTF-8 (exports from European Windows machines write units such as
// "m/s²" in a single-byte code page).
func toUTF8(b []byte) string {
	if utf8.Valid(b) {
		return string(b)
	}
	r := make([]rune, len(b))
	for i, c := range b {
		r[i] = rune(c)
	}
	return string(r)
}

// impulsiveChannel finds the channel that looks like a hammer's force: at
// least 80 % of its energy within 5 ms (and 16 samples) either side of its
// largest magnitude, where every other channel has less than half of its
// energy there. A response rings down over many periods; a hammer pulse
// lasts a millisecond or so (common practice: a steel tip gives a pulse of
// 0.1 to 1 ms, a soft tip a few ms). It returns -1 when no channel, or
// more than one, is impulsive.
func impulsiveChannel(chs []pipeline.Channel) (int, string) {
	const need, others = 0.8, 0.5
	best, bestFrac := -1, 0.0
	second := 0.0
	for i := range chs {
		c := &chs[i]
		x := c.Samples
		if len(x) == 0 {
			continue
		}
		// Remove the mean (a DC offset would spread "energy" everywhere).
		mean := 0.0
		for _, v := range x {
			mean += v
		}
		mean /= float64(len(x))
		peak, at, total := 0.0, 0, 0.0
		for k, v := range x {
			d := v - mean
			total += d * d
			if a := math.Abs(d); a > peak {
				peak, at = a, k
			}
		}
		if !(total > 0) || math.IsInf(total, 0) {
			continue
		}
		w := max(16, int(0.005*c.SampleRate))
		near := 0.0
		for k := max(0, at-w); k < min(len(x), at+w+1); k++ {
			d := x[k] - mean
			near += d * d
		}
		frac := near / total
		switch {
		case frac > bestFrac:
			second, best, bestFrac = bestFrac, i, frac
		case frac > second:
			second = frac
		}
	}
	if best < 0 || bestFrac < need || second >= others {
		return -1, ""
	}
	return best, fmt.Sprintf("no channel is named; %s is impulsive (%.0f %% of its energy within 5 ms of its peak) and was taken as the force (hammer) channel",
		chs[best].Name, 100*bestFrac)
}
