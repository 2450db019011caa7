package db

import (
	"context"
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/ringlog/ringlog/pipeline"
)

// TestStatsHitsMatchHits: the statistics' view carries exactly the values
// of the full view for what it loads, and leaves the rest out.
func TestStatsHitsMatchHits(t *testing.T) {
	ctx := context.Background()
	d := openTemp(t)
	for i := range 40 {
		path := fmt.Sprintf("/data/hit-%03d.csv", i)
		res := sampleResult(path)
		for k := range res.Modes {
			res.Modes[k].DampingRatio *= 1 + 0.01*float64(i%7)
			res.Modes[k].FrequencyHz *= 1 + 0.001*float64(i%5)
		}
		switch i % 4 {
		case 1:
			res.AddReason("clipped", pipeline.SeverityReject, nil, "clipped at %d", i)
			res.Decide()
		case 2:
			res.Reasons = nil
			res.Modes[2].Dropped = false
			res.Decide()
		}
		meta := HitMeta{Prototype: "P", Revision: []string{"A", "B"}[i%2], Bay: "bay-1", HitTime: t0.Add(time.Duration(i) * time.Hour)}
		if _, err := d.RecordResult(ctx, fileInfo(path, path, t0), meta, res, nil); err != nil {
			t.Fatal(err)
		}
	}
	for _, f := range []Filter{{}, {Prototype: "P", Revision: "B", Limit: 7},
		{Since: t0.Add(5 * time.Hour), Verdicts: []pipeline.Verdict{pipeline.Rejected, pipeline.Flagged}}} {
		full, err := d.Hits(ctx, f)
		if err != nil {
			t.Fatal(err)
		}
		f.ForStats = true
		light, err := d.Hits(ctx, f)
		if err != nil {
			t.Fatal(err)
		}
		if len(full) == 0 || len(light) != len(full) {
			t.Fatalf("filter %+v: %d hits for statistics, %d in full", f, len(light), len(full))
		}
		for i := range full {
			a, b := full[i], light[i]
			if a.ID != b.ID || a.SHA256 != b.SHA256 || a.Path != b.Path || a.ResultID != b.ResultID || a.AnalysisID != b.AnalysisID ||
				a.Meta.Prototype != b.Meta.Prototype || a.Meta.Revision != b.Meta.Revision || a.Meta.Bay != b.Meta.Bay ||
				!a.Meta.HitTime.Equal(b.Meta.HitTime) || a.Result.Verdict != b.Result.Verdict || a.Result.AnalysisVersion != b.Result.AnalysisVersion {
				t.Fatalf("hit %d differs:\nfull  %+v\nlight %+v", i, a, b)
			}
			if len(a.Result.Modes) != len(b.Result.Modes) || len(a.Result.Reasons) != len(b.Result.Reasons) {
				t.Fatalf("hit %d: %d modes, %d reasons; full %d, %d", i, len(b.Result.Modes), len(b.Result.Reasons), len(a.Result.Modes), len(a.Result.Reasons))
			}
			for k, m := range a.Result.Modes {
				l := b.Result.Modes[k]
				if m.Label != l.Label || m.FrequencyHz != l.FrequencyHz || m.DampingRatio != l.DampingRatio ||
					m.DampingRatioSD != l.DampingRatioSD || m.Amplitude != l.Amplitude || m.Dropped != l.Dropped || len(l.Estimates) != 0 ||
					!math.IsNaN(l.DampingRatioCI[0]) {
					t.Fatalf("hit %d mode %d: %+v, full %+v", i, k, l, m)
				}
			}
			for k, r := range a.Result.Reasons {
				l := b.Result.Reasons[k]
				if r.Code != l.Code || r.Severity != l.Severity || (r.Mode == nil) != (l.Mode == nil) || r.Mode != nil && *r.Mode != *l.Mode || l.Message != "" {
					t.Fatalf("hit %d reason %d: %+v, full %+v", i, k, l, r)
				}
			}
		}
	}
}
