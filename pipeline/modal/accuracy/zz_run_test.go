package accuracy

import (
	"context"
	"os"
	"strconv"
	"testing"
)

func TestDevRun(t *testing.T) {
	if os.Getenv("ACC_RUN") == "" {
		t.Skip()
	}
	cfg := Config{Quick: os.Getenv("ACC_QUICK") != ""}
	if v := os.Getenv("ACC_TRIALS"); v != "" {
		cfg.Trials, _ = strconv.Atoi(v)
	}
	if v := os.Getenv("ACC_F"); v != "" {
		f, _ := strconv.ParseFloat(v, 64)
		cfg.FrequenciesHz = []float64{f}
	}
	if v := os.Getenv("ACC_Z"); v != "" {
		f, _ := strconv.ParseFloat(v, 64)
		cfg.DampingRatios = []float64{f}
	}
	cfg.SkipTwoMode = os.Getenv("ACC_NO2") != ""
	cfg.NoForce = os.Getenv("ACC_NOFORCE") != ""
	Run(context.Background(), cfg, os.Stdout)
}
