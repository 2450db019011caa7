package db

import (
	"context"
	"testing"
)

// TestMigrationsAnalyse: on PostgreSQL the tables have planner statistics
// once the migrations are applied (a column a migration adds would
// otherwise have none until autovacuum comes by).
func TestMigrationsAnalyse(t *testing.T) {
	if !onPostgres() {
		t.Skip("PostgreSQL only: SQLite's planner needs no statistics here")
	}
	d := openTemp(t)
	var n int
	err := d.r.QueryRowContext(context.Background(), `
SELECT analyze_count FROM pg_stat_user_tables WHERE schemaname = current_schema() AND relname = 'hits'`).Scan(&n)
	if err != nil {
		t.Fatal(err)
	}
	if n < 1 {
		t.Fatalf("the hits table was analysed %d times by the end of the migrations, want at least once", n)
	}
}
