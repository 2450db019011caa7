package page

import (
	"bytes"
	"context"
	"testing"
)

// BenchmarkDaily200 renders the daily page of a day of 200 hits (about 30
// of them flagged or rejected, each re-read from its file and plotted)
// after a campaign of 80 earlier hits. The target: under 2 s per page and
// under 3 MB (the metric "bytes"; TestDailyBigDay asserts the size).
func BenchmarkDaily200(b *testing.B) {
	day := theBigDay(b)
	var buf bytes.Buffer
	opt := DailyOptions{Day: day.day, Expected: fixtureExpected}
	b.ResetTimer()
	for b.Loop() {
		buf.Reset()
		if _, err := Daily(context.Background(), &buf, day.store, opt); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(buf.Len()), "bytes")
}

// BenchmarkCompare renders the revision report of the same history (140
// hits of each revision).
func BenchmarkCompare(b *testing.B) {
	day := theBigDay(b)
	var buf bytes.Buffer
	opt := CompareOptions{Prototype: "mixer-frame", RevisionA: "A", RevisionB: "B", Expected: fixtureExpected("")}
	b.ResetTimer()
	for b.Loop() {
		buf.Reset()
		if _, err := Compare(context.Background(), &buf, day.store, opt); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(buf.Len()), "bytes")
}
