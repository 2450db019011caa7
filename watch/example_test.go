package watch_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/ringlog/ringlog/watch"
)

// A recorder exports a hit into the folder; the watcher hands the path out
// once the file has stopped changing and opens for reading.
func ExampleWatcher_Run() {
	dir, err := os.MkdirTemp("", "export")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer os.RemoveAll(dir)

	w, err := watch.New(watch.Config{
		Folders: []watch.Folder{{Path: dir}}, // default include: *.csv, *.txt, *.tsv, *.wav, *.uff, *.unv
		Settle:  100 * time.Millisecond,
	}, nil) // nil Seen: no file is known yet
	if err != nil {
		fmt.Println(err)
		return
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan watch.Ready)
	go w.Run(ctx, out)

	os.WriteFile(filepath.Join(dir, "bay1-hit-0001.csv"), []byte("t,force,acc\n0,0,0\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "bay1-hit-0001.csv.part"), []byte("in progress"), 0o644) // ignored

	r := <-out
	fmt.Println(filepath.Base(r.Path), r.Size, r.Err)
	// Output: bay1-hit-0001.csv 18 <nil>
}
