package watch

import (
	"errors"
	"testing"

	"github.com/fsnotify/fsnotify"
)

// An overflow or another notification error is counted and asks for a
// full scan, since events were lost.
func TestWatchErrorAsksForScan(t *testing.T) {
	w, err := New(Config{Folders: []Folder{{Path: t.TempDir()}}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, e := range []error{fsnotify.ErrEventOverflow, errors.New("inotify read failed")} {
		w.handleWatchError(e)
		select {
		case <-w.rescanCh:
		default:
			t.Errorf("error %d (%v) did not ask for a scan", i, e)
		}
	}
	if st := w.Stats(); st.Overflows != 1 || st.WatchErrors != 1 {
		t.Errorf("stats %+v: want 1 overflow, 1 watch error", st)
	}
}

func TestSkipName(t *testing.T) {
	for name, want := range map[string]bool{
		"hit.csv": false, "Hit 01.CSV": false, "a~b.csv": false,
		".hidden.csv": true, "~$hit.csv": true, "hit.csv~": true, "hit.tmp": true, "hit.TMP": true,
		"hit.csv.part": true, "hit.partial": true, ".~lock.hit.csv#": true, "hit.swp": true, "": true,
	} {
		if got := skipName(name); got != want {
			t.Errorf("skipName(%q) = %v, want %v", name, got, want)
		}
	}
}
