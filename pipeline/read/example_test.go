package read_test

import (
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"github.com/ringlog/ringlog/pipeline/read"
)

func ExampleFile() {
	rec, err := read.File(filepath.Join("..", "..", "testdata", "read", "decay-semicolon-decimal-comma.csv"), read.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(rec.Format, rec.Meta["prototype"])
	for _, c := range rec.Channels {
		fmt.Printf("%s [%s] %s: %d samples at %g Hz\n", c.Name, c.Unit, c.Role, len(c.Samples), c.SampleRate)
	}
	// Output:
	// csv bracket-a
	// accel [m/s^2] response: 1024 samples at 2048 Hz
	// force [N] force: 1024 samples at 2048 Hz
}

func ExampleCSV() {
	in := "# sample_rate: 1000\ntime [s],accel [m/s^2]\n0,0.5\n0.001,1.2x\n"
	_, err := read.CSV(strings.NewReader(in), "hit-003.csv", read.Options{})
	fmt.Println(err)
	var e *read.Error
	if errors.As(err, &e) {
		fmt.Println("line", e.Line)
	}
	// Output:
	// hit-003.csv: line 4: non-numeric cell "1.2x" in column "accel"
	// line 4
}
