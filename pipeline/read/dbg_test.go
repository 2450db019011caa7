package read

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

func TestDbgCorpus(t *testing.T) {
	files, _ := filepath.Glob(os.Getenv("CORPUS") + "/*")
	for _, f := range files {
		raw, _ := os.ReadFile(f)
		s := string(raw)
		i := strings.Index(s, "[]byte(")
		q := strings.TrimSuffix(strings.TrimSpace(s[i+7:]), ")")
		b, err := strconv.Unquote(q)
		if err != nil {
			t.Fatal(err)
		}
		t0 := time.Now()
		CSV(bytes.NewReader([]byte(b)), "f.csv", Options{})
		if d := time.Since(t0); d > 50*time.Millisecond {
			fmt.Println(f, d, len(b))
		}
	}
}
