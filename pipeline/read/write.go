package read

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"github.com/ringlog/ringlog/pipeline"
)

// WriteOptions shape the CSV that WriteCSV writes.
type WriteOptions struct {
	Delimiter    byte // ',' (the default), ';' or '\t'
	DecimalComma bool // write 0,125 instead of 0.125; needs ';' or '\t'
	TimeColumn   bool // write a first column "time [s]"
	// Digits is the number of significant digits of the samples; 0 writes
	// the shortest text that reads back to the same float64.
	Digits int
	// NoSampleRate leaves out the "# sample_rate:" line (only sensible
	// with TimeColumn).
	NoSampleRate bool
}

// sameShape checks that a recording can be written as one table.
func sameShape(rec *pipeline.Recording) error {
	if rec == nil || len(rec.Channels) == 0 {
		return errors.New("read: recording has no channels")
	}
	c0 := rec.Channels[0]
	if !(c0.SampleRate > 0) || math.IsInf(c0.SampleRate, 0) {
		return fmt.Errorf("read: channel %q: sample rate %g Hz is not a positive finite number", c0.Name, c0.SampleRate)
	}
	for _, c := range rec.Channels[1:] {
		if len(c.Samples) != len(c0.Samples) || c.SampleRate != c0.SampleRate {
			return fmt.Errorf("read: channel %q (%d samples at %g Hz) does not match channel %q (%d at %g Hz)",
				c.Name, len(c.Samples), c.SampleRate, c0.Name, len(c0.Samples), c0.SampleRate)
		}
	}
	return nil
}

var metaSkip = map[string]bool{
	"sample_rate": true, "sample rate": true, "samplerate": true, "sampling_rate": true, "sampling rate": true,
	"fs": true, "dt": true, "sample_interval": true, "full_scale": true, "full scale": true, "range": true,
}

// WriteCSV writes rec as CSV that CSV reads back: "# key: value" lines for
// rec.Meta (sorted, sample-rate and full-scale keys replaced by the
// channels' own), "# sample_rate:", "# full_scale:" when all response
// channels share one, a header with units in brackets, and one row per
// sample. All channels must have the same length and sample rate.
func WriteCSV(w io.Writer, rec *pipeline.Recording, opt WriteOptions) error {
	if err := sameShape(rec); err != nil {
		return err
	}
	d := opt.Delimiter
	if d == 0 {
		d = ','
	}
	if d != ',' && d != ';' && d != '\t' {
		return fmt.Errorf("read: delimiter %q: use ',', ';' or tab", d)
	}
	if opt.DecimalComma && d == ',' {
		return errors.New("read: a decimal comma needs the ';' or tab delimiter")
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	clean := strings.NewReplacer("\n", " ", "\r", " ")
	for _, k := range sortedKeys(rec.Meta) {
		if metaSkip[strings.ToLower(strings.TrimSpace(k))] {
			continue
		}
		key := strings.TrimSpace(strings.ReplaceAll(clean.Replace(k), ":", "_"))
		if key == "" {
			continue
		}
		fmt.Fprintf(bw, "# %s: %s\n", key, strings.TrimSpace(clean.Replace(rec.Meta[k])))
	}
	fs := rec.Channels[0].SampleRate
	if !opt.NoSampleRate {
		fmt.Fprintf(bw, "# sample_rate: %s\n", strconv.FormatFloat(fs, 'g', -1, 64))
	}
	full := 0.0
	for _, c := range rec.Channels {
		if c.Role == pipeline.RoleForce {
			continue
		}
		if full == 0 {
			full = c.FullScale
		} else if c.FullScale != full {
			full = 0
			break
		}
	}
	if full > 0 {
		fmt.Fprintf(bw, "# full_scale: %s\n", strconv.FormatFloat(full, 'g', -1, 64))
	}
	var cols []string
	if opt.TimeColumn {
		cols = append(cols, "time [s]")
	}
	for _, c := range rec.Channels {
		h := c.Name
		if c.Unit != "" {
			h += " [" + c.Unit + "]"
		}
		if strings.IndexByte(h, d) >= 0 || strings.ContainsAny(h, "\r\n") {
			return fmt.Errorf("read: channel name %q holds the delimiter or a line break", h)
		}
		cols = append(cols, h)
	}
	bw.WriteString(strings.Join(cols, string(d)))
	bw.WriteByte('\n')
	digits := opt.Digits
	if digits <= 0 {
		digits = -1
	}
	var buf []byte
	num := func(v float64, prec int) {
		s := len(buf)
		buf = strconv.AppendFloat(buf, v, 'g', prec, 64)
		if opt.DecimalComma {
			for i := s; i < len(buf); i++ {
				if buf[i] == '.' {
					buf[i] = ','
				}
			}
		}
	}
	n := len(rec.Channels[0].Samples)
	for i := 0; i < n; i++ {
		buf = buf[:0]
		if opt.TimeColumn {
			num(float64(i)/fs, -1)
			buf = append(buf, d)
		}
		for k := range rec.Channels {
			if k > 0 {
				buf = append(buf, d)
			}
			num(rec.Channels[k].Samples[i], digits)
		}
		buf = append(buf, '\n')
		if _, err := bw.Write(buf); err != nil {
			return err
		}
	}
	return bw.Flush()
}

// WriteWAV writes rec as a RIFF/WAVE file: PCM with bits 8, 16, 24 or 32,
// or IEEE float with bits 32 or 64. The samples are written as they are:
// PCM maps 1.0 to the full-scale code 2^(bits-1), rounds to the nearest
// code and saturates values outside [-1, 1) as an ADC would. Files with
// more than two channels or PCM deeper than 16 bits use
// WAVE_FORMAT_EXTENSIBLE; float files carry a fact chunk. The sample rate
// must be a whole number of Hz.
func WriteWAV(w io.Writer, rec *pipeline.Recording, bits int, float bool) error {
	if err := sameShape(rec); err != nil {
		return err
	}
	if float && bits != 32 && bits != 64 {
		return fmt.Errorf("read: IEEE float WAV needs 32 or 64 bits, not %d", bits)
	}
	if !float && bits != 8 && bits != 16 && bits != 24 && bits != 32 {
		return fmt.Errorf("read: PCM WAV needs 8, 16, 24 or 32 bits, not %d", bits)
	}
	fs := rec.Channels[0].SampleRate
	if fs != math.Trunc(fs) || fs < 1 || fs > math.MaxUint32 {
		return fmt.Errorf("read: WAV needs a whole sample rate in Hz, not %g", fs)
	}
	nch := len(rec.Channels)
	if nch > 65535 {
		return fmt.Errorf("read: %d channels do not fit a WAV file", nch)
	}
	bps := bits / 8
	frames := int64(len(rec.Channels[0].Samples))
	dataSize := frames * int64(nch*bps)
	tag := uint16(wavePCM)
	if float {
		tag = waveFloat
	}
	ext := nch > 2 || (!float && bits > 16)
	fmtSize := 16
	switch {
	case ext:
		fmtSize = 40
	case float:
		fmtSize = 18
	}
	factSize := 0
	if float {
		factSize = 12
	}
	riff := int64(4+8+fmtSize+factSize+8) + dataSize + dataSize&1
	if riff > math.MaxUint32 {
		return fmt.Errorf("read: %d bytes of samples do not fit a WAV file", dataSize)
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	le := binary.LittleEndian
	var b []byte
	b = append(b, "RIFF"...)
	b = le.AppendUint32(b, uint32(riff))
	b = append(b, "WAVEfmt "...)
	b = le.AppendUint32(b, uint32(fmtSize))
	if ext {
		b = le.AppendUint16(b, waveExtensible)
	} else {
		b = le.AppendUint16(b, tag)
	}
	b = le.AppendUint16(b, uint16(nch))
	b = le.AppendUint32(b, uint32(fs))
	b = le.AppendUint32(b, uint32(fs)*uint32(nch*bps))
	b = le.AppendUint16(b, uint16(nch*bps))
	b = le.AppendUint16(b, uint16(bits))
	switch {
	case ext:
		b = le.AppendUint16(b, 22)
		b = le.AppendUint16(b, uint16(bits)) // valid bits
		b = le.AppendUint32(b, 0)            // channel mask: no speaker positions
		b = le.AppendUint16(b, tag)
		b = append(b, guidTail[:]...)
	case float:
		b = le.AppendUint16(b, 0)
	}
	if float {
		b = append(b, "fact"...)
		b = le.AppendUint32(b, 4)
		b = le.AppendUint32(b, uint32(frames))
	}
	b = append(b, "data"...)
	b = le.AppendUint32(b, uint32(dataSize))
	if _, err := bw.Write(b); err != nil {
		return err
	}
	full := math.Ldexp(1, bits-1)
	for i := int64(0); i < frames; i++ {
		b = b[:0]
		for k := range rec.Channels {
			v := rec.Channels[k].Samples[i]
			switch {
			case float && bits == 32:
				b = le.AppendUint32(b, math.Float32bits(float32(v)))
			case float:
				b = le.AppendUint64(b, math.Float64bits(v))
			default:
				q := math.Round(v * full)
				if math.IsNaN(q) {
					q = 0
				}
				q = math.Max(-full, math.Min(full-1, q))
				x := int64(q)
				switch bits {
				case 8:
					b = append(b, byte(x+128))
				case 16:
					b = le.AppendUint16(b, uint16(int16(x)))
				case 24:
					b = append(b, byte(x), byte(x>>8), byte(x>>16))
				case 32:
					b = le.AppendUint32(b, uint32(int32(x)))
				}
			}
		}
		if _, err := bw.Write(b); err != nil {
			return err
		}
	}
	if dataSize&1 == 1 {
		bw.WriteByte(0)
	}
	return bw.Flush()
}

// WriteUFF58 writes every channel of rec as one universal file dataset 58
// time-response record (function type 1, real double precision, even
// abscissa in seconds), in ASCII (4E20.12 per line) or, with binary, as
// 58b records with little-endian IEEE 754 data. ID line 1 holds the
// channel name, record 9 the unit; a force channel gets the specific data
// type "excitation force", a channel in m/s^2 or g "acceleration". The
// abscissa increment is written as E13.5, as the format prescribes: the
// reader recovers whole-Hz sample rates exactly.
func WriteUFF58(w io.Writer, rec *pipeline.Recording, binary bool) error {
	return writeUFF58(w, rec, binary, false)
}

func writeUFF58(w io.Writer, rec *pipeline.Recording, bin, single bool) error {
	if rec == nil || len(rec.Channels) == 0 {
		return errors.New("read: recording has no channels")
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	line80 := func(s string) string {
		s = strings.NewReplacer("\n", " ", "\r", " ").Replace(strings.TrimSpace(s))
		if s == "" {
			s = "NONE"
		}
		if len(s) > 80 {
			s = s[:80]
		}
		return s
	}
	field := func(s string, n int) string {
		s = strings.ReplaceAll(line80(s), " ", "_")
		if len(s) > n {
			s = s[:n]
		}
		return s
	}
	ordType, size, width, perLine := 4, 8, 20, 4
	if single {
		ordType, size, width, perLine = 2, 4, 13, 6
	}
	for i, c := range rec.Channels {
		if !(c.SampleRate > 0) || math.IsInf(c.SampleRate, 0) {
			return fmt.Errorf("read: channel %q: sample rate %g Hz is not a positive finite number", c.Name, c.SampleRate)
		}
		n := len(c.Samples)
		bw.WriteString("    -1\n")
		if bin {
			fmt.Fprintf(bw, "%6s%1s%6d%6d%12d%12d%6d%6d%12d%12d\n", "58", "b", 1, 2, 11, n*size, 0, 0, 0, 0)
		} else {
			bw.WriteString("    58\n")
		}
		fmt.Fprintf(bw, "%s\nNONE\nNONE\nNONE\nNONE\n", line80(c.Name))
		fmt.Fprintf(bw, "%5d%10d%5d%10d %-10s%10d%4d %-10s%10d%4d\n", 1, i+1, 0, 0, "NONE", i+1, 0, "NONE", 0, 0)
		fmt.Fprintf(bw, "%10d%10d%10d%13.5E%13.5E%13.5E\n", ordType, n, 1, 0.0, 1/c.SampleRate, 0.0)
		dt := 1
		u := strings.ToLower(c.Unit)
		switch {
		case c.Role == pipeline.RoleForce:
			dt = uffDataForce
		case u == "m/s^2" || u == "m/s2" || u == "m/s²" || u == "g":
			dt = uffDataAcceleration
		}
		fmt.Fprintf(bw, "%10d%5d%5d%5d %-20s %-20s\n", uffDataTime, 0, 0, 0, "Time", "s")
		fmt.Fprintf(bw, "%10d%5d%5d%5d %-20s %-20s\n", dt, 0, 0, 0, field(c.Name, 20), field(c.Unit, 20))
		for k := 0; k < 2; k++ {
			fmt.Fprintf(bw, "%10d%5d%5d%5d %-20s %-20s\n", 0, 0, 0, 0, "NONE", "NONE")
		}
		if bin {
			var b []byte
			for _, v := range c.Samples {
				if single {
					b = binaryLE.AppendUint32(b[:0], math.Float32bits(float32(v)))
				} else {
					b = binaryLE.AppendUint64(b[:0], math.Float64bits(v))
				}
				bw.Write(b)
			}
		} else {
			var b []byte
			for k, v := range c.Samples {
				s := len(b)
				if single {
					b = strconv.AppendFloat(b, v, 'E', 5, 64)
				} else {
					b = strconv.AppendFloat(b, v, 'E', 12, 64)
				}
				if pad := width - (len(b) - s); pad > 0 {
					b = append(b, strings.Repeat(" ", pad)...)
					copy(b[s+pad:], b[s:len(b)-pad])
					for j := s; j < s+pad; j++ {
						b[j] = ' '
					}
				}
				if (k+1)%perLine == 0 || k == n-1 {
					b = append(b, '\n')
					bw.Write(b)
					b = b[:0]
				}
			}
		}
		if _, err := bw.WriteString("    -1\n"); err != nil {
			return err
		}
	}
	return bw.Flush()
}

var binaryLE = binary.LittleEndian

// sortedKeys returns the keys of m in order.
func sortedKeys(m map[string]string) []string {
	k := make([]string, 0, len(m))
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}
