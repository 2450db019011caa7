package main

import (
	"context"
	"fmt"

	"github.com/ringlog/ringlog/pipeline/modal/accuracy"
)

func init() {
	register(command{name: "accuracy", summary: "print the Monte Carlo accuracy tables of the damping estimate (bias, sd over the Cramer-Rao bound, interval coverage; synthetic and realistic recordings)", run: runAccuracy})
}

func runAccuracy(ctx context.Context, e *env, args []string) error {
	fs := newFlags("accuracy", "[--quick] [--trials N] [--seed S] [--no-force] [--realistic] [--realistic-trials N]", e.stderr)
	quick := fs.Bool("quick", false, "a reduced grid with fewer trials (about a minute)")
	trials := fs.Int("trials", 0, "Monte Carlo trials per cell (default 500, 40 with --quick)")
	seed := fs.Uint64("seed", 1, "random seed")
	noForce := fs.Bool("no-force", false, "analyse the response alone (no hammer channel)")
	realOnly := fs.Bool("realistic", false, "only the realistic rows (the clean cases of the recorded-like corpus)")
	realTrials := fs.Int("realistic-trials", 0, "trials per realistic case (default 100, 20 with --quick)")
	rest, err := parseInterleaved(fs, args)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return usagef("unexpected argument %q", rest[0])
	}
	if *trials < 0 || *realTrials < 0 {
		return usagef("--trials and --realistic-trials must be positive")
	}
	pass := true
	if !*realOnly {
		n := *trials
		if n == 0 && !*quick {
			// 500 trials keep the coverage estimate's standard error near 1 %,
			// so a correct cell rarely reads outside 90-98 % by chance.
			n = 500
		}
		tab, err := accuracy.Run(ctx, accuracy.Config{Quick: *quick, Trials: n, Seed: *seed, NoForce: *noForce}, e.stdout)
		if err != nil {
			return err
		}
		pass = tab.Pass
		fmt.Fprintln(e.stdout)
	}
	rn := *realTrials
	if rn == 0 {
		rn = 100
		if *quick {
			rn = 20
		}
	}
	rows, err := accuracy.RunRealistic(ctx, accuracy.RealisticConfig{Trials: rn, Seed: *seed}, e.stdout)
	if err != nil {
		return err
	}
	pass = pass && accuracy.RealisticPass(rows)
	if !pass {
		if *quick {
			// 40 trials leave a standard error of about 1 % on the bias at
			// 20 dB: a quick run shows the method, not the verdict.
			fmt.Fprintln(e.stdout, "quick run: too few trials to judge a 1 % bias at 20 dB or a coverage (see the +/- se column); run without --quick for the verdict")
			return nil
		}
		return fmt.Errorf("some cells or rows miss their target (marked above)")
	}
	return nil
}
