package report

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"
	"time"
)

// TestJSONFloatsAsEncodingJSON: report.JSON writes every finite float as
// encoding/json does (the reference), over edge cases and random values
// across the whole exponent range.
func TestJSONFloatsAsEncodingJSON(t *testing.T) {
	xs := []float64{0, math.Copysign(0, -1), 1, -1, 0.1, 1e-6, 9.999999e-7, 1e-7, -1e-7, 1e20, 1e21, 9.99e20, 123456789, 1e-300,
		math.SmallestNonzeroFloat64, math.MaxFloat64, 0.00725, 4.02969, 2.46e-05}
	r := rand.New(rand.NewPCG(1, 2))
	for range 20000 {
		xs = append(xs, math.Float64frombits(r.Uint64()))
	}
	for _, x := range xs {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			continue
		}
		want, _ := json.Marshal(x)
		got, err := JSON(x)
		if err != nil || string(got) != string(want) {
			t.Fatalf("JSON(%v) = %s, %v; encoding/json writes %s", x, got, err, want)
		}
	}
	type s struct {
		A    float64 `json:"a_b"`
		Odd  int     `json:"we\"ird"`
		None string  `json:"none,nullempty"`
	}
	got, err := JSON(s{A: 1.5, Odd: 2})
	if want := `{"a_b":1.5,"we\"ird":2,"none":null}`; err != nil || string(got) != want {
		t.Errorf("JSON = %s, %v; want %s", got, err, want)
	}
}

// TestJSONStringsAndTimesAsEncodingJSON: strings (plain, escaped, HTML
// characters, control characters, invalid UTF-8) and times come out as
// encoding/json writes them (the reference).
func TestJSONStringsAndTimesAsEncodingJSON(t *testing.T) {
	for _, v := range []any{"", "frame", `a"b`, `a\b`, "<script>&", "tab\there", "new\nline", "\x7f", "é ü", "\xff\xfe", "\u2028",
		time.Date(2024, 6, 3, 8, 0, 0, 123456789, time.UTC), time.Date(2026, 12, 3, 8, 0, 0, 0, time.FixedZone("x", 3600)), time.Time{}} {
		want, _ := json.Marshal(v)
		got, err := JSON(v)
		if err != nil || string(got) != string(want) {
			t.Errorf("JSON(%q) = %s, %v; encoding/json writes %s", v, got, err, want)
		}
	}
}
