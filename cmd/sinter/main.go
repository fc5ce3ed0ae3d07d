// Command sinter compiles a patch of sine partials into a sampler-ready
// sample set: one WAV file per root key and velocity layer, an SFZ mapping
// and a manifest. Run "sinter help" for usage.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"runtime"
	"strings"
	"syscall"
	"time"

	"sinter/patch"
	"sinter/synth/kernel"
	"sinter/synth/sampleset"
)

// version is the release of sinter, recorded in every manifest.
var version = "0.1.0"

// Exit statuses.
const (
	exitOK      = 0
	exitFailure = 1 // rendering or writing failed
	exitUsage   = 2 // bad command line or bad patch
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

func run(args []string, stdout, stderr io.Writer) int {
	if err := kernel.EnvironmentError(); err != nil {
		fmt.Fprintf(stderr, "sinter: %v\n", err)
		return exitUsage
	}
	if len(args) == 0 {
		fmt.Fprint(stderr, overview())
		return exitUsage
	}
	switch args[0] {
	case "help", "-h", "-help", "--help":
		return help(args[1:], stdout, stderr)
	case "version", "-version", "--version":
		fmt.Fprintf(stdout, "sinter %s (%s kernel: %s)\n", version, kernel.Active(), kernel.Reason())
		return exitOK
	}
	if cmd, ok := commandRuns[args[0]]; ok {
		return cmd(args[1:], stdout, stderr)
	}
	fmt.Fprintf(stderr, "sinter: unknown command %q; run \"sinter help\" for usage\n", args[0])
	return exitUsage
}

// commandRuns are the commands by name, each given its arguments.
var commandRuns = map[string]func(args []string, stdout, stderr io.Writer) int{
	"render": render, "check": check, "verify": verify, "plot": plotNote,
	"init": initPatch, "merge": merge, "schema": schema, "page": writePage, "serve": serve, "analyze": analyze,
}

func schema(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("schema", flag.ContinueOnError)
	positional, code, ok := parsePositional(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	if len(positional) != 0 {
		fmt.Fprintf(stderr, "sinter schema: expected no argument, got %d; run \"sinter help schema\" for usage\n", len(positional))
		return exitUsage
	}
	stdout.Write(patch.JSONSchema())
	return exitOK
}

// parseArgs parses flags that may come before or after the one positional
// argument, as in "sinter render patch.yaml -o out". When it returns ok
// false the command stops with the status code: help was asked for, which
// it printed, or the arguments are wrong, which it said.
func parseArgs(fs *flag.FlagSet, args []string, stdout, stderr io.Writer) (path string, code int, ok bool) {
	positional, code, ok := parsePositional(fs, args, stdout, stderr)
	if !ok {
		return "", code, false
	}
	if len(positional) != 1 {
		fmt.Fprintf(stderr, "sinter %s: expected one argument, got %d; run \"sinter help %s\" for usage\n", fs.Name(), len(positional), fs.Name())
		return "", exitUsage, false
	}
	return positional[0], exitOK, true
}

// parsePositional parses flags placed anywhere among the positional
// arguments, which it returns; -h or --help prints the command's help.
func parsePositional(fs *flag.FlagSet, args []string, stdout, stderr io.Writer) ([]string, int, bool) {
	fs.SetOutput(io.Discard)
	var positional []string
	for {
		err := fs.Parse(args)
		if errors.Is(err, flag.ErrHelp) {
			printHelp(stdout, fs)
			return nil, exitOK, false
		}
		if err != nil {
			fmt.Fprintf(stderr, "sinter %s: %v; run \"sinter help %s\" for usage\n", fs.Name(), err, fs.Name())
			return nil, exitUsage, false
		}
		if fs.NArg() == 0 {
			return positional, exitOK, true
		}
		positional = append(positional, fs.Arg(0))
		args = fs.Args()[1:]
	}
}

// given reports whether the flag name was on the command line, so an
// empty value can be told from none.
func given(fs *flag.FlagSet, name string) bool {
	found := false
	fs.Visit(func(f *flag.Flag) { found = found || f.Name == name })
	return found
}

// parseKeys reads a --keys list such as "C4,E4", "60-72" or "C-1-C0".
func parseKeys(list string) ([]int, error) {
	var keys []int
	for _, item := range strings.Split(list, ",") {
		item = strings.TrimSpace(item)
		if k, err := patch.ParseNote(item); err == nil {
			keys = append(keys, k)
			continue
		}
		found := false
		for i := 1; i < len(item) && !found; i++ {
			if item[i] != '-' {
				continue
			}
			lo, err1 := patch.ParseNote(item[:i])
			hi, err2 := patch.ParseNote(item[i+1:])
			if err1 == nil && err2 == nil && lo <= hi {
				for k := lo; k <= hi; k++ {
					keys = append(keys, k)
				}
				found = true
			}
		}
		if !found {
			return nil, fmt.Errorf("--keys: %q is not a key or a rising range of keys (C4, 60, 60-72, C4-C5)", item)
		}
	}
	return keys, nil
}

// loadPlan loads and expands a patch.
func loadPlan(path, keyList, outDir string) (*patch.Plan, *patch.Patch, error) {
	var keys []int
	if keyList != "" {
		var err error
		if keys, err = parseKeys(keyList); err != nil {
			return nil, nil, err
		}
	}
	p, err := patch.Load(path)
	if err != nil {
		return nil, nil, err
	}
	if outDir != "" {
		p.OutputDir = outDir
	}
	plan, err := p.Expand(patch.ExpandOptions{Keys: keys})
	if err != nil {
		return nil, nil, err
	}
	return plan, p, nil
}

// renderSummary is what render reports with --json.
type renderSummary struct {
	Patch        string     `json:"patch"`
	OutputDir    string     `json:"output_dir"`
	Files        int        `json:"files"`
	AudioSeconds float64    `json:"audio_seconds"`
	Bytes        int64      `json:"bytes"` // of the WAV files
	Levelling    string     `json:"levelling"`
	Kernel       string     `json:"kernel"`
	Work         work       `json:"partial_samples"`
	Noise        *work      `json:"noise_samples,omitempty"`
	Rendered     int        `json:"notes_rendered"`
	Kept         int        `json:"files_kept"`
	Rerendered   int        `json:"notes_rendered_twice"`
	Warnings     []string   `json:"warnings"`
	Leftovers    []leftover `json:"leftovers_removed"`
}

// leftover is a folder an ended render of the same output left beside it,
// which this one removed (or put back as the output folder), as --json
// reports it.
type leftover struct {
	Path     string `json:"path"`
	Freed    int64  `json:"bytes_freed"`
	Restored bool   `json:"restored,omitempty"`
}

// reached, when set, is told each stage a render passes; the process
// tests set it to stop a render at a chosen point.
var reached func(sampleset.Stage)

// noticePrinter prints what a build tells besides rendering — a wait for
// the output folder, leftovers removed — on stderr, even with --quiet,
// as warnings are: a wait would otherwise look like a hang.
func noticePrinter(stderr io.Writer, command string) func(string) {
	return func(msg string) { fmt.Fprintf(stderr, "sinter %s: %s\n", command, msg) }
}

func render(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("render", flag.ContinueOnError)
	outDir := fs.String("o", "", "output folder `DIR`, overriding the patch's output.dir")
	keyList := fs.String("keys", "", "render only the keys of `LIST`")
	jobs := fs.Int("jobs", runtime.NumCPU(), "render `N` notes at once")
	quiet := fs.Bool("quiet", false, "print nothing but errors")
	asJSON := fs.Bool("json", false, "print a summary of the set, or the errors, as JSON on stdout")
	allowLarge := fs.Bool("allow-large", false, "render sets beyond the default limits")
	force := fs.Bool("force", false, "render every note, even those the output folder already holds")
	shardFlag := fs.String("shard", "", "render one slice of the set: `K/N` (shard K of N, from 1), or auto from the environment")
	noWait := fs.Bool("no-wait", false, "fail at once (status 1) while another process writes DIR, instead of waiting for it")
	withPage := fs.Bool("page", false, "also write the review page, index.html, and a picture of each file into DIR (see sinter help page)")
	path, code, ok := parseArgs(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	out := reporter{json: *asJSON, stdout: stdout, stderr: stderr, command: "render"}
	if *jobs < 1 {
		fmt.Fprintf(stderr, "sinter render: --jobs must be 1 or more, got %d\n", *jobs)
		return exitUsage
	}
	var shard sampleset.Shard
	var err error
	// A --shard given empty is a slip, not a request for the whole set.
	if given(fs, "shard") {
		if shard, err = parseShard(*shardFlag, os.Getenv); err != nil {
			return out.fail(exitUsage, err)
		}
	}
	plan, _, err := loadPlan(path, *keyList, *outDir)
	if err != nil {
		return out.fail(exitUsage, err)
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	opts := sampleset.Options{Jobs: *jobs, Version: version, Limits: sampleset.DefaultLimits, Force: *force, Shard: shard,
		NoWait: *noWait, Notice: noticePrinter(stderr, "render"), Reached: reached}
	if *allowLarge {
		opts.Limits = sampleset.Limits{}
	}
	if *withPage {
		if shard.Count > 1 {
			return out.fail(exitUsage, errors.New("--page writes the page of a whole set; a shard has none (write it after merge with sinter page)"))
		}
		opts.Extras = pageExtras(*jobs)
	}
	if !*quiet {
		opts.Progress = progressPrinter(stderr)
	}
	res, err := sampleset.Build(ctx, plan, opts)
	var limit *sampleset.LimitError
	var busy *sampleset.BusyError
	switch {
	case errors.Is(err, context.Canceled):
		err = errors.New("interrupted; the previous set, if any, is unchanged")
	case errors.As(err, &busy):
		err = fmt.Errorf("%w; not waiting for it (--no-wait)", err)
	case errors.As(err, &limit):
		return out.fail(exitUsage, fmt.Errorf("%w; check the patch, or pass --allow-large to render it anyway", err))
	}
	if err != nil {
		return out.fail(exitFailure, err)
	}
	summary := renderSummary{Patch: plan.PatchFile, OutputDir: res.Dir, Files: len(res.Manifest.Files),
		Levelling: res.Manifest.Levelling, Kernel: kernel.Active().String(),
		Work:     work{Computed: res.Stats.PartialSamples, Nominal: res.Stats.Nominal, Counts: renderCounts, Again: &res.Again.PartialSamples},
		Noise:    noiseWork(res.Stats, renderCounts, &res.Again.NoiseSamples),
		Rendered: res.Rendered, Kept: res.Reused, Rerendered: res.Rerendered, Warnings: res.Warnings, Leftovers: []leftover{}}
	for _, l := range res.Removed {
		summary.Leftovers = append(summary.Leftovers, leftover{Path: l.Path, Freed: l.Bytes, Restored: l.Restored})
	}
	for _, f := range res.Manifest.Files {
		summary.AudioSeconds += float64(f.Frames) / float64(f.SampleRate)
		if info, err := os.Stat(filepath.Join(res.Dir, filepath.FromSlash(f.Path))); err == nil {
			summary.Bytes += info.Size()
		}
	}
	if out.json {
		return out.emit(summary)
	}
	for _, w := range res.Warnings {
		fmt.Fprintf(stderr, "sinter render: warning: %s\n", w)
	}
	if !*quiet {
		if summary.Kept == 0 {
			fmt.Fprintf(stdout, "rendered %s into %s (levelling: %s)\n", count(summary.Files, "file"), summary.OutputDir, summary.Levelling)
		} else {
			fmt.Fprintf(stdout, "updated %s: %d files, %d kept unchanged, %d notes rendered (levelling: %s; --force renders all)\n",
				summary.OutputDir, summary.Files, summary.Kept, summary.Rendered, summary.Levelling)
		}
		fmt.Fprintf(stdout, "computed %s", summary.Work)
		if summary.Rerendered > 0 {
			fmt.Fprintf(stdout, ", and %.3g more to render %s a second time", float64(*summary.Work.Again), count(summary.Rerendered, "note"))
		}
		fmt.Fprintln(stdout)
		if n := summary.Noise; n != nil {
			fmt.Fprintf(stdout, "added %s", n)
			if summary.Rerendered > 0 {
				fmt.Fprintf(stdout, ", and %.3g more in the second renders", float64(*n.Again))
			}
			fmt.Fprintln(stdout)
		}
	}
	return exitOK
}

// progressPrinter draws a bar on a terminal — files done of total, time
// elapsed and an estimate of the time left — and prints a line per file
// elsewhere, so CI logs stay readable.
func progressPrinter(w io.Writer) func(done, total int, file string) {
	if f, ok := w.(*os.File); ok {
		if info, err := f.Stat(); err == nil && info.Mode()&os.ModeCharDevice != 0 {
			start := time.Now()
			return func(done, total int, file string) {
				fmt.Fprintf(w, "\r\x1b[K%s", progressBar(done, total, time.Since(start)))
				if done == total {
					fmt.Fprintln(w)
				}
			}
		}
	}
	return func(done, total int, file string) {
		fmt.Fprintf(w, "%d/%d %s\n", done, total, file)
	}
}

// progressBar is one line: a bar of 30 cells, the count, the time elapsed
// and, from the rate so far, the time left.
func progressBar(done, total int, elapsed time.Duration) string {
	const cells = 30
	filled := cells * done / max(total, 1)
	left := time.Duration(0)
	if done > 0 {
		left = elapsed * time.Duration(total-done) / time.Duration(done)
	}
	return fmt.Sprintf("[%s%s] %d/%d files, %s elapsed, about %s left",
		strings.Repeat("#", filled), strings.Repeat("-", cells-filled), done, total, clock(elapsed), clock(left))
}

// clock writes a duration as m:ss.
func clock(d time.Duration) string {
	s := int(d.Round(time.Second) / time.Second)
	return fmt.Sprintf("%d:%02d", s/60, s%60)
}

func verify(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("verify", flag.ContinueOnError)
	dir, code, ok := parseArgs(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	// What a killed render left beside the set is no part of it, but
	// verify is where one looks after a failed pipeline.
	sampleset.RemoveLeftovers(dir, noticePrinter(stderr, "verify"))
	problems, err := sampleset.Verify(dir)
	if err != nil {
		fmt.Fprintf(stderr, "sinter verify: %v\n", err)
		return exitFailure
	}
	for _, p := range problems {
		fmt.Fprintf(stderr, "%s\n", p)
	}
	if len(problems) > 0 {
		fmt.Fprintf(stderr, "sinter verify: %s in %s\n", count(len(problems), "problem"), dir)
		return exitFailure
	}
	fmt.Fprintf(stdout, "%s: every file matches the manifest, and the mapping plays each of them\n", dir)
	return exitOK
}

// count writes n things, "1 problem" or "2 problems".
func count(n int, thing string) string {
	if n == 1 {
		return "1 " + thing
	}
	return fmt.Sprintf("%d %ss", n, thing)
}
