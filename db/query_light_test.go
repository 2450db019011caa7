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

// TestEachHitMatchesHits: listing page by page gives the hits of Hits,
// complete and in the same order, also across hits with the same time
// and with a limit; an error of the callback ends the listing.
func TestEachHitMatchesHits(t *testing.T) {
	ctx := context.Background()
	d := openTemp(t)
	defer func(n int) { eachHitPage = n }(eachHitPage)
	eachHitPage = 4
	for i := range 23 {
		path := fmt.Sprintf("/data/each-%03d.csv", i)
		res := sampleResult(path)
		res.Modes[0].DampingRatio *= 1 + 0.01*float64(i)
		// three hits at a time share a hit time, stored out of order
		meta := HitMeta{Prototype: "P", Revision: []string{"A", "B"}[i%2], HitTime: t0.Add(time.Duration((23-i)/3) * time.Minute)}
		if _, err := d.RecordResult(ctx, fileInfo(path, path, t0), meta, res, nil); err != nil {
			t.Fatal(err)
		}
	}
	for _, f := range []Filter{{}, {Limit: 10}, {Revision: "B"}, {Prototype: "none"}} {
		want, err := d.Hits(ctx, f)
		if err != nil {
			t.Fatal(err)
		}
		var got []Hit
		if err := d.EachHit(ctx, f, func(h Hit) error { got = append(got, h); return nil }); err != nil {
			t.Fatal(err)
		}
		if len(got) != len(want) {
			t.Fatalf("filter %+v: EachHit gave %d hits, Hits %d", f, len(got), len(want))
		}
		for i := range want {
			if a, b := showHit(want[i]), showHit(got[i]); a != b {
				t.Fatalf("filter %+v, hit %d:\nHits    %s\nEachHit %s", f, i, a, b)
			}
		}
	}
	stop := fmt.Errorf("enough")
	n := 0
	err := d.EachHit(ctx, Filter{}, func(Hit) error {
		if n++; n == 6 {
			return stop
		}
		return nil
	})
	if err != stop || n != 6 {
		t.Fatalf("after an error of the callback: %d hits, error %v", n, err)
	}
}

// showHit prints every field of h and its result, the mode a reason
// names by value rather than by pointer.
func showHit(h Hit) string {
	r := *h.Result
	h.Result = nil
	reasons := make([]string, len(r.Reasons))
	for i, rs := range r.Reasons {
		m := -1
		if rs.Mode != nil {
			m = *rs.Mode
		}
		rs.Mode = nil
		reasons[i] = fmt.Sprintf("%+v mode %d", rs, m)
	}
	r.Reasons = nil
	return fmt.Sprintf("%+v %+v %q", h, r, reasons)
}
