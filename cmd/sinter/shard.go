package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strconv"
	"strings"
	"syscall"

	"sinter/synth/sampleset"
)

// shardEnv are the variables batch engines give each job of a split run:
// the job's index, whether it counts from 0 or 1, and the number of jobs.
var shardEnv = []struct {
	index, count string
	from         int
}{
	{"CI_NODE_INDEX", "CI_NODE_TOTAL", 1},                         // GitLab CI parallel jobs
	{"CIRCLE_NODE_INDEX", "CIRCLE_NODE_TOTAL", 0},                 // CircleCI parallelism
	{"BUILDKITE_PARALLEL_JOB", "BUILDKITE_PARALLEL_JOB_COUNT", 0}, // Buildkite parallel steps
	{"JOB_COMPLETION_INDEX", "SINTER_SHARDS", 0},                  // Kubernetes Indexed Job; set SINTER_SHARDS to its completions
}

// parseShard reads --shard: K/N (shard K of N, from 1), or auto, which
// takes SINTER_SHARD=K/N or else the first pair of shardEnv that is set.
func parseShard(value string, getenv func(string) string) (sampleset.Shard, error) {
	if value == "auto" {
		if v := getenv("SINTER_SHARD"); v != "" {
			s, err := shardOf(v)
			if err != nil {
				return s, fmt.Errorf("SINTER_SHARD: %w", err)
			}
			return s, nil
		}
		for _, e := range shardEnv {
			index, count := getenv(e.index), getenv(e.count)
			if index == "" || count == "" {
				continue
			}
			k, err1 := strconv.Atoi(index)
			n, err2 := strconv.Atoi(count)
			if err1 != nil || err2 != nil {
				return sampleset.Shard{}, fmt.Errorf("%s=%q and %s=%q are not whole numbers", e.index, index, e.count, count)
			}
			return checkShard(k-e.from+1, n)
		}
		return sampleset.Shard{}, errors.New("--shard auto found no shard in the environment (SINTER_SHARD=K/N, CI_NODE_INDEX, CIRCLE_NODE_INDEX, BUILDKITE_PARALLEL_JOB or JOB_COMPLETION_INDEX with SINTER_SHARDS)")
	}
	return shardOf(value)
}

// shardOf reads K/N.
func shardOf(value string) (sampleset.Shard, error) {
	k, n, ok := strings.Cut(value, "/")
	ki, err1 := strconv.Atoi(k)
	ni, err2 := strconv.Atoi(n)
	if !ok || err1 != nil || err2 != nil {
		return sampleset.Shard{}, fmt.Errorf("shard %q is not K/N (shard K of N, from 1) or auto", value)
	}
	return checkShard(ki, ni)
}

func checkShard(k, n int) (sampleset.Shard, error) {
	if n < 1 || k < 1 || k > n {
		return sampleset.Shard{}, fmt.Errorf("shard %d of %d does not exist; shards run from 1 to N", k, n)
	}
	return sampleset.Shard{Index: k, Count: n}, nil
}

func merge(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("merge", flag.ContinueOnError)
	outDir := fs.String("o", "", "folder `DIR` of the merged set (default: the patch's output.dir)")
	asJSON := fs.Bool("json", false, "print the result, or the errors, as JSON on stdout")
	noWait := fs.Bool("no-wait", false, "fail at once (status 1) while another process writes DIR, instead of waiting for it")
	positional, code, ok := parsePositional(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	if len(positional) < 2 {
		fmt.Fprintf(stderr, "sinter merge: expected the patch and the shard folders; run \"sinter help merge\" for usage\n")
		return exitUsage
	}
	out := reporter{json: *asJSON, stdout: stdout, stderr: stderr, command: "merge"}
	plan, _, err := loadPlan(positional[0], "", *outDir)
	if err != nil {
		return out.fail(exitUsage, err)
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := sampleset.Merge(ctx, plan, plan.OutputDir, positional[1:], sampleset.Options{Version: version, NoWait: *noWait, Notice: noticePrinter(stderr, "merge")}); err != nil {
		return out.fail(exitFailure, err)
	}
	if out.json {
		return out.emit(struct {
			OutputDir string `json:"output_dir"`
			Files     int    `json:"files"`
			Shards    int    `json:"shards"`
		}{plan.OutputDir, len(plan.Notes), len(positional) - 1})
	}
	fmt.Fprintf(stdout, "merged %d shards into %s: %d files\n", len(positional)-1, plan.OutputDir, len(plan.Notes))
	return exitOK
}
