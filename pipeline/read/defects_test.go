package read

import (
	"bytes"
	"encoding/binary"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// smallCSV is a two-column CSV with a sample-rate line given by rate.
func smallCSV(rate string, extra string) []byte {
	var b bytes.Buffer
	b.WriteString("# sample_rate: " + rate + "\n" + extra + "force,accel\n")
	for i := range 64 {
		b.WriteString("0,")
		b.WriteString(strings.Repeat("1", 1+i%3))
		b.WriteString("\n")
	}
	return b.Bytes()
}

// TestSampleRateOutsideRange: a metadata rate that is positive and finite
// but absurd (4.9e-324 Hz is the smallest float64; it made the spectral
// bin width zero and the analysis panic) is an error naming the file.
func TestSampleRateOutsideRange(t *testing.T) {
	for _, rate := range []string{"4.9e-324", "1e-300", "1e12"} {
		_, err := CSV(bytes.NewReader(smallCSV(rate, "")), "tiny.csv", Options{})
		wantErr(t, err, "tiny.csv", -1, "sample rate", "outside")
	}
	// The ends of the range are accepted.
	for _, rate := range []string{"0.001", "1e9", "2048"} {
		if _, err := CSV(bytes.NewReader(smallCSV(rate, "")), "ok.csv", Options{}); err != nil {
			t.Errorf("rate %s: %v", rate, err)
		}
	}
}

// TestUFFHugeAbscissaStep: an abscissa increment of 1e306 s gave a rate of
// 1e-306 Hz and an infinite duration that the JSON output could not print.
func TestUFFHugeAbscissaStep(t *testing.T) {
	src, err := os.ReadFile(filepath.Join("..", "..", "testdata", "read", "decay-ascii.uff"))
	if err != nil {
		t.Fatal(err)
	}
	for _, dx := range []string{"1.0E+306", "4.9E-324"} {
		bad := bytes.ReplaceAll(src, []byte("4.88281E-04"), []byte(dx))
		_, err = UFF58(bytes.NewReader(bad), "step.uff", Options{})
		wantErr(t, err, "step.uff", -1, "sample rate")
	}
}

// TestMessagesAndMetadataClipped: a huge non-numeric cell, a huge
// metadata value and a huge key do not go whole into the error text or
// the recording's metadata (they are stored, logged and shown in status).
func TestMessagesAndMetadataClipped(t *testing.T) {
	const huge = 8 << 20
	cell := bytes.Repeat([]byte("x"), huge)
	var b bytes.Buffer
	b.WriteString("# sample_rate: 1000\nforce,accel\n0,1\n0,")
	b.Write(cell)
	b.WriteString("\n0,2\n")
	_, err := CSV(&b, "cell.csv", Options{})
	e := wantErr(t, err, "cell.csv", 4, "xxxx", "bytes)")
	if n := len(err.Error()); n > MaxProblem+200 {
		t.Errorf("error text is %d bytes, want at most about %d", n, MaxProblem)
	}
	_ = e

	val := strings.Repeat("v", huge)
	key := strings.Repeat("k", huge)
	rec, err := CSV(bytes.NewReader(smallCSV("1000", "# operator: "+val+"\n# "+key+": short\n")), "meta.csv", Options{})
	if err != nil {
		t.Fatal(err)
	}
	total := 0
	for k, v := range rec.Meta {
		total += len(k) + len(v)
		if len(v) > MaxMetaText+40 || len(k) > MaxMetaKey+40 {
			t.Errorf("metadata %q... (%d bytes) = %d bytes: not clipped", Clip(k, 20), len(k), len(v))
		}
	}
	if !strings.HasPrefix(rec.Meta["operator"], "vvvv") || !strings.Contains(rec.Meta["operator"], "bytes)") {
		t.Errorf("operator = %q, want the clipped value with its length", Clip(rec.Meta["operator"], 100))
	}
	if total > 8<<10 {
		t.Errorf("metadata holds %d bytes", total)
	}
}

// TestChannelsCapped: a CSV header of 5 million columns took 2.4 GB for
// a 64 MB file, a 65535-channel WAV 1.2 GB; both are now refused with a
// clear error before their buffers are made.
func TestChannelsCapped(t *testing.T) {
	var b bytes.Buffer
	b.WriteString("# sample_rate: 1000\n")
	n := MaxChannels + 10
	for i := range n {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString("c")
	}
	b.WriteString("\n")
	_, err := CSV(&b, "wide.csv", Options{})
	wantErr(t, err, "wide.csv", 2, "columns", "at most")

	// A WAV header announcing 65535 channels of 8 bits, with a few bytes
	// of data.
	var w bytes.Buffer
	le := func(v any) { _ = binary.Write(&w, binary.LittleEndian, v) }
	w.WriteString("RIFF")
	le(uint32(36 + 8))
	w.WriteString("WAVEfmt ")
	le(uint32(16))
	le(uint16(1))        // PCM
	le(uint16(65535))    // channels
	le(uint32(1000))     // rate
	le(uint32(65535000)) // byte rate
	le(uint16(65535))    // block align
	le(uint16(8))
	w.WriteString("data")
	le(uint32(8))
	w.Write(make([]byte, 8))
	_, err = WAV(&w, "many.wav", Options{})
	wantErr(t, err, "many.wav", -1, "65535 channels", "at most")
}

// TestChannelNamesClipped: a header cell of megabytes became a channel
// name that was stored and printed whole.
func TestChannelNamesClipped(t *testing.T) {
	long := strings.Repeat("n", 4<<20)
	rec, err := CSV(bytes.NewReader([]byte("# sample_rate: 1000\nforce,"+long+" [m/s^2]\n0,1\n0,2\n0,3\n")), "name.csv", Options{})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range rec.Channels {
		if len(c.Name) > MaxName+40 || len(c.Unit) > MaxName+40 {
			t.Errorf("channel name of %d bytes, unit of %d bytes: not clipped", len(c.Name), len(c.Unit))
		}
	}
}
