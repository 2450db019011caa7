package main

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"
)

// checkSpreadsheetCells fails when a cell of rows would be evaluated by a
// spreadsheet: it starts with =, +, -, @, a tab or a carriage return and is
// not a number (the characters of the OWASP advice on CSV injection).
func checkSpreadsheetCells(t *testing.T, what string, rows [][]string, decimalComma bool) {
	t.Helper()
	for i, row := range rows {
		for j, c := range row {
			if c == "" || !strings.ContainsRune("=+-@\t\r", rune(c[0])) {
				continue
			}
			n := c
			if decimalComma {
				n = strings.Replace(c, ",", ".", 1)
			}
			if _, err := strconv.ParseFloat(n, 64); err != nil {
				t.Errorf("%s: row %d cell %d %q would be evaluated as a formula", what, i, j, c)
			}
		}
	}
}

// TestCSVForSpreadsheets: a prototype, revisions and files named like
// formulas, with commas, come out of 'export --format csv' and
// 'stats --csv' as text a spreadsheet does not evaluate (a leading '), a
// revision named -1 stays a number, the export is a table from its first
// line (the provenance in a companion file or behind --with-provenance),
// and --decimal-comma writes ';' between cells and a decimal comma.
func TestCSVForSpreadsheets(t *testing.T) {
	t.Parallel()
	dir := t.TempDir()
	dbPath := filepath.Join(dir, "history.db")
	c := chain{m: [3]float64{1.0, 0.8, 0.6}, k: [3]float64{2.2e5, 1.8e5, 1.5e5}, alpha: 4, beta: 2.5e-5}
	start := time.Date(2024, 6, 3, 8, 0, 0, 0, time.UTC)
	const proto, evil = "=SUM(1,2)", "=cmd|' /C calc'!A0"
	for i, rev := range []string{evil, "-1"} {
		files := chainHits(t, dir, "+x,"+strconv.Itoa(i), c, 4, uint64(10+i), start.Add(time.Duration(i)*24*time.Hour))
		args := append([]string{"ingest", "--db", dbPath, "--prototype", proto, "--revision", rev, "--quiet"}, files...)
		if out, errOut, code := cli(t, args...); code != 0 {
			t.Fatalf("ingest: exit %d: %s %s", code, out, errOut)
		}
	}

	read := func(what, text string, comma rune) [][]string {
		t.Helper()
		r := csv.NewReader(strings.NewReader(text))
		r.Comma = comma
		rows, err := r.ReadAll()
		if err != nil {
			t.Fatalf("%s: not CSV: %v\n%s", what, err, text)
		}
		return rows
	}
	revisions := func(rows [][]string, col int) map[string]bool {
		seen := map[string]bool{}
		for _, r := range rows[1:] {
			seen[r[col]] = true
		}
		return seen
	}

	// export --format csv: the table from the first line; the cautions on
	// stderr.
	out, errOut, code := cli(t, "export", "--db", dbPath, "--prototype", proto, "--format", "csv")
	if code != 0 {
		t.Fatalf("export: exit %d: %s", code, errOut)
	}
	rows := read("export", out, ',')
	if rows[0][0] != "revision" || len(rows) < 7 {
		t.Fatalf("export starts with %q, %d rows; want the header first", rows[0], len(rows))
	}
	checkSpreadsheetCells(t, "export", rows, false)
	if revs := revisions(rows, 0); !revs["'"+evil] || !revs["-1"] {
		t.Errorf("export revisions %v, want %q quoted and -1 as it is", revs, evil)
	}
	if !strings.Contains(errOut, "caution: Damping is the quantity") {
		t.Errorf("export to stdout without provenance: no cautions on stderr: %q", errOut)
	}

	// --with-provenance: the '# ' lines first, the same table below.
	out, _, code = cli(t, "export", "--db", dbPath, "--prototype", proto, "--format", "csv", "--with-provenance")
	if code != 0 || !strings.HasPrefix(out, "# format: ringlog-damping-export 1\n") || !strings.Contains(out, "+x,0-00.csv") {
		t.Errorf("--with-provenance: exit %d\n%s", code, tail(out, 2000))
	}

	// --out FILE: the table in FILE, the provenance beside it.
	outFile := filepath.Join(dir, "frame.csv")
	if _, errOut, code = cli(t, "export", "--db", dbPath, "--prototype", proto, "--format", "csv", "--out", outFile, "--decimal-comma"); code != 0 {
		t.Fatalf("export --out: exit %d: %s", code, errOut)
	}
	table, err := os.ReadFile(outFile)
	if err != nil {
		t.Fatal(err)
	}
	rows = read("export --decimal-comma", string(table), ';')
	checkSpreadsheetCells(t, "export --decimal-comma", rows, true)
	value := rows[1][4]
	if strings.Contains(value, ".") || !strings.Contains(value, ",") {
		t.Errorf("--decimal-comma: value cell %q, want a decimal comma", value)
	}
	prov, err := os.ReadFile(outFile + ".provenance.txt")
	if err != nil || !strings.Contains(string(prov), "caution: ") || !strings.Contains(string(prov), "sha256 ") || !strings.Contains(string(prov), "prototype: "+proto) {
		t.Errorf("provenance beside --out: %v\n%s", err, prov)
	}

	// stats --csv, and with --decimal-comma.
	for _, dc := range []bool{false, true} {
		args := []string{"stats", "--db", dbPath, "--prototype", proto, "--csv"}
		comma := ','
		if dc {
			args, comma = append(args, "--decimal-comma"), ';'
		}
		out, errOut, code = cli(t, args...)
		if code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, errOut)
		}
		rows = read("stats", out, comma)
		checkSpreadsheetCells(t, "stats", rows, dc)
		if rows[1][0] != "'"+proto {
			t.Errorf("%v: prototype cell %q, want %q", args, rows[1][0], "'"+proto)
		}
		if revs := revisions(rows, 1); !revs["'"+evil] || !revs["-1"] {
			t.Errorf("%v: revisions %v", args, revs)
		}
		if mean := rows[1][6]; dc == strings.Contains(mean, ".") {
			t.Errorf("%v: mean %q", args, mean)
		}
	}
	if _, _, code = cli(t, "stats", "--db", dbPath, "--prototype", proto, "--decimal-comma"); code != exitUsage {
		t.Errorf("stats --decimal-comma without --csv: exit %d, want %d", code, exitUsage)
	}
}
