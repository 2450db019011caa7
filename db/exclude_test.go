package db

import (
	"context"
	"errors"
	"strconv"
	"strings"
	"testing"
	"time"
)

// TestExcludeAndUndo: a hit is excluded by id or by a unique prefix of its
// SHA-256, the exclusion is read back with why, by and when on Hits (and
// the statistics' view), an undo keeps the record marked undone, and
// ambiguous or unknown references are errors.
func TestExcludeAndUndo(t *testing.T) {
	d := openTemp(t)
	ctx := context.Background()
	t0 := time.Date(2025, 3, 4, 10, 0, 0, 0, time.UTC)
	// Two hashes sharing the prefix "abcd1", a third apart.
	shas := []string{"abcd1" + strings.Repeat("0", 59), "abcd1" + strings.Repeat("f", 59), "1234" + strings.Repeat("5", 60)}
	var ids []int64
	for i, sha := range shas {
		path := "/d/" + strconv.Itoa(i) + ".csv"
		fi := FileInfo{Path: path, Size: 10, MTime: t0, SHA256: sha}
		out, err := d.RecordResult(ctx, fi, HitMeta{Prototype: "P", Revision: "A", HitTime: t0.Add(time.Duration(i) * time.Minute)}, sampleResult(path), nil)
		if err != nil {
			t.Fatal(err)
		}
		ids = append(ids, out.HitID)
	}

	for _, c := range []struct {
		ref  string
		want int64
		err  error
	}{
		{strconv.FormatInt(ids[1], 10), ids[1], nil},
		{"ABCD1FFF", ids[1], nil}, // case does not matter
		{"abcd10", ids[0], nil},
		{"abcd1", 0, ErrAmbiguous},
		{"ffff", 0, ErrNotFound},
		{"abc", 0, ErrNotFound}, // shorter than MinPrefix
		{"xyz!", 0, ErrNotFound},
	} {
		h, err := d.ResolveHit(ctx, c.ref)
		if c.err != nil {
			if !errors.Is(err, c.err) {
				t.Errorf("ResolveHit(%q): %v, want %v", c.ref, err, c.err)
			}
			continue
		}
		if err != nil || h.ID != c.want {
			t.Errorf("ResolveHit(%q): hit %d, %v; want hit %d", c.ref, h.ID, err, c.want)
		}
	}
	// The ambiguity error names both candidates.
	if _, err := d.ResolveHit(ctx, "abcd1"); err == nil || !strings.Contains(err.Error(), "/d/0.csv") || !strings.Contains(err.Error(), "/d/1.csv") {
		t.Errorf("ambiguous prefix: %v", err)
	}

	at := time.Date(2025, 3, 5, 9, 30, 0, 0, time.UTC)
	ex, added, err := d.Exclude(ctx, ids[1], "hammer tip came loose", "anna", at)
	if err != nil || !added || ex.ID == 0 {
		t.Fatalf("Exclude: %+v, %v, %v", ex, added, err)
	}
	if _, again, err := d.Exclude(ctx, ids[1], "twice", "bert", at.Add(time.Hour)); err != nil || again {
		t.Errorf("Exclude of an excluded hit: added %v, %v", again, err)
	}
	if _, _, err := d.Exclude(ctx, 99999, "x", "anna", at); !errors.Is(err, ErrNotFound) {
		t.Errorf("Exclude of a missing hit: %v", err)
	}
	if _, _, err := d.Exclude(ctx, ids[0], "  ", "anna", at); err == nil {
		t.Error("Exclude without a reason: no error")
	}
	for _, f := range []Filter{{}, {ForStats: true}} {
		hits, err := d.Hits(ctx, f)
		if err != nil || len(hits) != 3 {
			t.Fatalf("Hits(%+v): %d, %v", f, len(hits), err)
		}
		for i, h := range hits {
			if (h.Excluded != nil) != (i == 1) {
				t.Errorf("ForStats %v: hit %d excluded %+v", f.ForStats, i, h.Excluded)
			}
		}
		if x := hits[1].Excluded; x == nil || x.Why != "hammer tip came loose" || x.By != "anna" || !x.At.Equal(at) {
			t.Errorf("ForStats %v: exclusion read back as %+v", f.ForStats, x)
		}
	}

	undoAt := at.Add(24 * time.Hour)
	if u, err := d.Undo(ctx, ids[1], "bert", undoAt); err != nil || u.Why != "hammer tip came loose" || !u.UndoneAt.Equal(undoAt) {
		t.Fatalf("Undo: %+v, %v", u, err)
	}
	if _, err := d.Undo(ctx, ids[1], "bert", undoAt); !errors.Is(err, ErrNotFound) {
		t.Errorf("Undo of a hit no longer excluded: %v", err)
	}
	hits, _ := d.Hits(ctx, Filter{})
	for _, h := range hits {
		if h.Excluded != nil {
			t.Errorf("after undo hit %d still excluded: %+v", h.ID, h.Excluded)
		}
	}
	// Excluded again: a second record; the first stays, marked undone.
	if _, added, err := d.Exclude(ctx, ids[1], "second look: loose tip after all", "carl", undoAt.Add(time.Hour)); err != nil || !added {
		t.Fatalf("Exclude after undo: %v, %v", added, err)
	}
	all, err := d.Exclusions(ctx, ids[1])
	if err != nil || len(all) != 2 {
		t.Fatalf("Exclusions: %+v, %v", all, err)
	}
	if all[0].UndoneBy != "bert" || !all[0].UndoneAt.Equal(undoAt) || !all[1].UndoneAt.IsZero() || all[1].By != "carl" {
		t.Errorf("exclusion history: %+v", all)
	}
}
