package main

import (
	"flag"
	"fmt"
	"io"
	"math"
	"text/tabwriter"

	"sinter/patch"
	"sinter/synth"
	"sinter/synth/wav"
)

func check(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("check", flag.ContinueOnError)
	keyList := fs.String("keys", "", "plan only these keys")
	path, ok := parseArgs(fs, args, stderr)
	if !ok {
		return exitUsage
	}
	plan, p, ok := loadPlan(path, *keyList, "", stderr)
	if !ok {
		return exitUsage
	}
	printPlan(stdout, plan, p)
	return exitOK
}

func printPlan(w io.Writer, plan *patch.Plan, p *patch.Patch) {
	var seconds float64
	var bytes, partialSamples int64
	keys := 0
	for i, n := range plan.Notes {
		seconds += float64(n.Frames) / float64(n.SampleRate)
		bytes += wav.Size(n.Frames, wav.Options{SampleRate: n.SampleRate, BitDepth: plan.BitDepth, Channels: n.Channels,
			Sampler: &wav.Sampler{}, Instrument: &wav.Instrument{}})
		partialSamples += int64(len(n.Partials)) * int64(n.Frames)
		if i == 0 || plan.Notes[i-1].Key != n.Key {
			keys++
		}
	}
	channels := "mono"
	if plan.Channels == 2 {
		channels = "stereo"
	}
	format := fmt.Sprintf("%d-bit PCM", plan.BitDepth)
	if plan.BitDepth == 32 {
		format = "32-bit float"
	}
	fmt.Fprintf(w, "patch %s (%s)\n", plan.Name, plan.PatchFile)
	fmt.Fprintf(w, "  files:    %d (%d keys x %d velocity layers x %d round robins)\n", len(plan.Notes), keys, len(p.Velocities), p.RoundRobin)
	fmt.Fprintf(w, "  format:   %d Hz, %s, %s\n", plan.SampleRate, format, channels)
	if p.TailUntil > 0 {
		fmt.Fprintf(w, "  audio:    at most %.1f s in all; each tail ends when the level stays below %.0f dBFS\n", seconds, 20*math.Log10(p.TailUntil))
	} else {
		fmt.Fprintf(w, "  audio:    %.1f s in all, %.2f s per file\n", seconds, p.Hold+p.Tail)
	}
	fmt.Fprintf(w, "  bytes:    %d (%.1f MiB) into %s\n", bytes, float64(bytes)/(1<<20), plan.OutputDir)
	fmt.Fprintf(w, "  work:     %.3g partial-samples at most\n", float64(partialSamples))
	fmt.Fprintf(w, "  band limit: %.0f Hz (%.3g of the sample rate), fading from %.0f Hz\n",
		p.BandLimit*float64(p.SampleRate), p.BandLimit, p.BandLimit*(1-p.BandFade)*float64(p.SampleRate))
	dither := "off"
	if plan.Dither && plan.BitDepth != 32 {
		dither = "TPDF, ±1 LSB"
	}
	fmt.Fprintf(w, "  levelling: %s; dither %s\n", p.Normalize, dither)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "key\tmidi\tf0 Hz\tkept\tfaded\tdropped\thighest Hz\tloop s\tloop kind\tpitch error\t")
	for i, n := range plan.Notes {
		if i > 0 && plan.Notes[i-1].Key == n.Key {
			continue // partial counts are per key; layers share them
		}
		highest := 0.0
		for _, part := range n.Partials {
			highest = max(highest, part.Hz)
		}
		loopSpan, kind, cents := "-", "-", "-"
		if loop, ok := synth.PlanLoop(&n); ok {
			rate := float64(n.SampleRate)
			loopSpan = fmt.Sprintf("%.3f-%.3f", float64(loop.Start)/rate, float64(loop.End+1)/rate)
			kind, cents = "whole cycles", fmt.Sprintf("%.4f c", loop.Cents)
			if loop.Crossfade > 0 {
				kind, cents = "crossfade", "-"
			} else if loop.Retune != 0 {
				kind, cents = "retuned", fmt.Sprintf("%+.4f c", loop.Retune)
			}
		}
		fmt.Fprintf(tw, "%s\t%d\t%.2f\t%d\t%d\t%d\t%.0f\t%s\t%s\t%s\t\n", patch.NoteName(n.Key), n.Key, n.F0, len(n.Partials), n.Faded, n.Dropped, highest, loopSpan, kind, cents)
	}
	tw.Flush()
}
