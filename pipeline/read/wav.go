package read

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"strconv"

	"github.com/ringlog/ringlog/pipeline"
)

// WAV reads a RIFF/WAVE file: PCM 8/16/24/32-bit, IEEE float 32/64-bit,
// plain or WAVE_FORMAT_EXTENSIBLE, any number of channels. PCM samples are
// scaled to [-1, 1) (a full-scale code of 2^(bits-1) reads 1) and then
// divided by the channel's sensitivity; PCM channels get FullScale
// 1/|sensitivity|. When r is also an io.Seeker its size is used to detect
// a truncated data chunk before reading it. name is used in errors and as
// Recording.Path.
func WAV(r io.Reader, name string, opt Options) (*pipeline.Recording, error) {
	size := int64(-1)
	if s, ok := r.(io.Seeker); ok {
		if cur, err := s.Seek(0, io.SeekCurrent); err == nil {
			if end, err := s.Seek(0, io.SeekEnd); err == nil {
				if _, err := s.Seek(cur, io.SeekStart); err != nil {
					return nil, fileErr(name, err, "cannot seek")
				}
				size = end - cur
			}
		}
	}
	return readWAV(r, name, opt, size)
}

// WAVE format tags (Microsoft multimedia registration, common knowledge).
const (
	wavePCM        = 0x0001
	waveFloat      = 0x0003
	waveExtensible = 0xFFFE
)

// guidTail is bytes 2..15 of the KSDATAFORMAT_SUBTYPE_PCM / _IEEE_FLOAT
// GUIDs as stored in the file; bytes 0..1 hold the format tag.
var guidTail = [14]byte{0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71}

type wavIn struct {
	br  *bufio.Reader
	off int64
}

func (w *wavIn) read(p []byte) (int, error) {
	n, err := io.ReadFull(w.br, p)
	w.off += int64(n)
	return n, err
}

func (w *wavIn) skip(n int64) error {
	for n > 0 {
		k := n
		if k > 1<<30 {
			k = 1 << 30
		}
		m, err := w.br.Discard(int(k))
		w.off += int64(m)
		n -= int64(m)
		if err != nil {
			return err
		}
	}
	return nil
}

type wavFmt struct {
	float     bool
	channels  int
	rate      uint32
	bits      int
	validBits int
}

// readWAV is WAV with the number of bytes from the current position to
// the end of the input, -1 when unknown.
func readWAV(r io.Reader, name string, opt Options, size int64) (*pipeline.Recording, error) {
	w := &wavIn{br: bufio.NewReaderSize(r, 64<<10)}
	var hdr [12]byte
	n, _ := w.read(hdr[:])
	if n == 0 {
		return nil, fileErr(name, nil, "empty file")
	}
	if n < 12 || string(hdr[0:4]) != "RIFF" || string(hdr[8:12]) != "WAVE" {
		switch {
		case n >= 4 && string(hdr[0:4]) == "RIFX":
			return nil, offErr(name, 0, nil, "big-endian RIFX files are not supported")
		case n >= 4 && string(hdr[0:4]) == "RF64":
			return nil, offErr(name, 0, nil, "RF64 (64-bit size) WAV files are not supported")
		}
		return nil, offErr(name, 0, ErrUnknownFormat, "unknown format: not a RIFF/WAVE file (first bytes %s)", hexHead(hdr[:n]))
	}
	var f *wavFmt
	for {
		chunkOff := w.off
		var ch [8]byte
		n, err := w.read(ch[:])
		if n == 0 && err == io.EOF {
			if f == nil {
				return nil, offErr(name, chunkOff, nil, "no fmt chunk before the end of the file")
			}
			return nil, offErr(name, chunkOff, nil, "no data chunk before the end of the file")
		}
		if n < 8 {
			return nil, offErr(name, chunkOff, nil, "truncated chunk header (%d of 8 bytes)", n)
		}
		id := string(ch[:4])
		sz := int64(binary.LittleEndian.Uint32(ch[4:]))
		switch id {
		case "fmt ":
			if f != nil {
				return nil, offErr(name, chunkOff, nil, "second fmt chunk")
			}
			f, err = readWAVFmt(w, name, chunkOff, sz)
			if err != nil {
				return nil, err
			}
		case "data":
			if f == nil {
				return nil, offErr(name, chunkOff, nil, "data chunk before the fmt chunk")
			}
			return readWAVData(w, name, opt, f, chunkOff, sz, size)
		default:
			if err := w.skip(sz); err != nil {
				return nil, offErr(name, w.off, nil, "chunk %q at byte %d declares %d bytes but the file ends at byte %d", id, chunkOff, sz, w.off)
			}
			if sz&1 == 1 {
				_ = w.skip(1) // pad byte; a missing one at the very end is harmless
			}
		}
	}
}

func readWAVFmt(w *wavIn, name string, chunkOff, sz int64) (*wavFmt, error) {
	if sz < 16 {
		return nil, offErr(name, chunkOff+4, nil, "fmt chunk of %d bytes; at least 16 are needed", sz)
	}
	b := make([]byte, min(sz, 40))
	if n, _ := w.read(b); n < len(b) {
		return nil, offErr(name, w.off, nil, "truncated fmt chunk")
	}
	if err := w.skip(sz - int64(len(b)) + sz&1); err != nil {
		return nil, offErr(name, w.off, nil, "truncated fmt chunk")
	}
	le := binary.LittleEndian
	at := func(field int64) int64 { return chunkOff + 8 + field }
	tag := le.Uint16(b[0:2])
	f := &wavFmt{
		channels: int(le.Uint16(b[2:4])),
		rate:     le.Uint32(b[4:8]),
		bits:     int(le.Uint16(b[14:16])),
	}
	blockAlign := int(le.Uint16(b[12:14]))
	f.validBits = f.bits
	if tag == waveExtensible {
		if len(b) < 40 {
			return nil, offErr(name, chunkOff+4, nil, "extensible fmt chunk of %d bytes; 40 are needed", sz)
		}
		if vb := int(le.Uint16(b[18:20])); vb > 0 {
			f.validBits = vb
		}
		sub := b[24:40]
		if [14]byte(sub[2:]) != guidTail {
			return nil, offErr(name, at(24), nil, "extensible format with an unknown sub-format GUID")
		}
		tag = le.Uint16(sub[0:2])
	}
	switch tag {
	case wavePCM:
		if f.bits != 8 && f.bits != 16 && f.bits != 24 && f.bits != 32 {
			return nil, offErr(name, at(14), nil, "PCM with %d bits per sample is not supported (8, 16, 24 or 32)", f.bits)
		}
	case waveFloat:
		f.float = true
		if f.bits != 32 && f.bits != 64 {
			return nil, offErr(name, at(14), nil, "IEEE float with %d bits per sample is not supported (32 or 64)", f.bits)
		}
	default:
		return nil, offErr(name, at(0), nil, "WAVE format tag 0x%04x is not supported (PCM or IEEE float only)", tag)
	}
	if f.validBits > f.bits {
		return nil, offErr(name, at(18), nil, "%d valid bits in a %d-bit container", f.validBits, f.bits)
	}
	if f.channels == 0 {
		return nil, offErr(name, at(2), nil, "zero channels")
	}
	if f.channels > MaxChannels {
		return nil, offErr(name, at(2), nil, "%d channels; at most %d channels are read", f.channels, MaxChannels)
	}
	if f.rate == 0 {
		return nil, offErr(name, at(4), nil, "sample rate is zero")
	}
	if want := f.channels * f.bits / 8; blockAlign != want {
		return nil, offErr(name, at(12), nil, "block align %d does not match %d channels of %d bits (%d)", blockAlign, f.channels, f.bits, want)
	}
	return f, nil
}

func readWAVData(w *wavIn, name string, opt Options, f *wavFmt, chunkOff, sz, size int64) (*pipeline.Recording, error) {
	bps := f.bits / 8
	frame := int64(f.channels * bps)
	start := chunkOff + 8
	if sz%frame != 0 {
		return nil, offErr(name, chunkOff+4, nil, "data chunk of %d bytes is not a whole number of %d-byte frames", sz, frame)
	}
	frames := sz / frame
	if frames == 0 {
		return nil, offErr(name, chunkOff, nil, "data chunk holds no samples")
	}
	if size >= 0 && start+sz > size {
		return nil, offErr(name, size, nil, "truncated data chunk: it declares %d bytes from byte %d, but the file ends at byte %d (%d bytes of data)", sz, start, size, size-start)
	}
	if len(opt.Names) > 0 && len(opt.Names) != f.channels {
		return nil, fileErr(name, nil, "%d channel names configured for a WAV file of %d channels", len(opt.Names), f.channels)
	}
	// With the size unknown, read the chunk first: memory then follows
	// the bytes really there, not the size the header claims.
	var raw []byte
	if size < 0 {
		var err error
		raw, err = io.ReadAll(io.LimitReader(w.br, sz))
		w.off += int64(len(raw))
		if err != nil {
			return nil, offErr(name, w.off, err, "read error")
		}
		if int64(len(raw)) < sz {
			return nil, offErr(name, w.off, nil, "truncated data chunk: it declares %d bytes from byte %d, but the file ends after %d bytes of data", sz, start, len(raw))
		}
	}
	// One backing array for all channels.
	back := make([]float64, frames*int64(f.channels))
	out := make([][]float64, f.channels)
	for c := range out {
		out[c] = back[int64(c)*frames : int64(c)*frames : int64(c+1)*frames]
	}
	le := binary.LittleEndian
	decode := func(b []byte, bufOff int64) error {
		switch {
		case f.float && bps == 4:
			for i := 0; i < len(b); i += 4 {
				v := float64(math.Float32frombits(le.Uint32(b[i:])))
				if v-v != 0 {
					return offErr(name, bufOff+int64(i), nil, "sample is %g", v)
				}
				c := (i / 4) % f.channels
				out[c] = append(out[c], v)
			}
		case f.float:
			for i := 0; i < len(b); i += 8 {
				v := math.Float64frombits(le.Uint64(b[i:]))
				if v-v != 0 {
					return offErr(name, bufOff+int64(i), nil, "sample is %g", v)
				}
				c := (i / 8) % f.channels
				out[c] = append(out[c], v)
			}
		case bps == 1:
			for i := range b {
				c := i % f.channels
				out[c] = append(out[c], (float64(b[i])-128)/128)
			}
		case bps == 2:
			for i := 0; i < len(b); i += 2 {
				c := (i / 2) % f.channels
				out[c] = append(out[c], float64(int16(le.Uint16(b[i:])))/(1<<15))
			}
		case bps == 3:
			for i := 0; i < len(b); i += 3 {
				v := int32(uint32(b[i])<<8|uint32(b[i+1])<<16|uint32(b[i+2])<<24) >> 8
				c := (i / 3) % f.channels
				out[c] = append(out[c], float64(v)/(1<<23))
			}
		case bps == 4:
			for i := 0; i < len(b); i += 4 {
				c := (i / 4) % f.channels
				out[c] = append(out[c], float64(int32(le.Uint32(b[i:])))/(1<<31))
			}
		}
		return nil
	}
	if raw != nil {
		if err := decode(raw, start); err != nil {
			return nil, err
		}
	} else {
		buf := make([]byte, max(1, (64<<10)/frame)*frame)
		for remaining := sz; remaining > 0; {
			k := min(int64(len(buf)), remaining)
			bufOff := w.off
			n, err := w.read(buf[:k])
			if derr := decode(buf[:int64(n)/frame*frame], bufOff); derr != nil {
				return nil, derr
			}
			if err != nil {
				return nil, offErr(name, w.off, nil, "truncated data chunk: it declares %d bytes from byte %d, but the file ends after %d bytes of data", sz, start, sz-remaining+int64(n))
			}
			remaining -= k
		}
	}
	kind := "pcm"
	fullScale := 1.0
	if f.float {
		kind, fullScale = "float", 0
	}
	rec := &pipeline.Recording{Path: name, Format: FormatWAV, Meta: map[string]string{
		"wav_encoding": kind,
		"wav_bits":     strconv.Itoa(f.bits),
		"wav_channels": strconv.Itoa(f.channels),
	}}
	if f.validBits != f.bits {
		rec.Meta["wav_valid_bits"] = strconv.Itoa(f.validBits)
	}
	rec.Channels = make([]pipeline.Channel, f.channels)
	for c := range out {
		nm := fmt.Sprintf("ch%d", c+1)
		if len(opt.Names) > 0 {
			nm = opt.Names[c]
		}
		rec.Channels[c] = pipeline.Channel{Name: nm, SampleRate: float64(f.rate), Samples: out[c], FullScale: fullScale}
	}
	if err := finish(rec, opt, nil); err != nil {
		return nil, err
	}
	return rec, nil
}
