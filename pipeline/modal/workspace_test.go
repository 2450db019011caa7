package modal

import (
	"runtime"
	"testing"
)

// FFT workspaces are reused across hits even when a garbage collection
// ran in between (a sync.Pool is emptied by every collection, and the
// daemon then rebuilt its FFT plans for each file).
func TestSpectrumWorkSurvivesGC(t *testing.T) {
	w := getSpectrumWork(4096)
	putSpectrumWork(w)
	runtime.GC()
	runtime.GC()
	if w2 := getSpectrumWork(4096); w2 != w {
		t.Errorf("workspace rebuilt after a collection")
	} else {
		putSpectrumWork(w2)
	}
	big := getSpectrumWork(1 << 18)
	putSpectrumWork(big)
	if b2 := getSpectrumWork(1 << 18); b2 == big {
		t.Errorf("a 2^18 workspace was kept: its memory would stay with the daemon")
	}
}
