package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"

	"sinter/patch"
)

// starterPatch is what init writes: a small, complete patch that renders
// as it is, with the settings most patches change.
const starterPatch = `# yaml-language-server: $schema=sinter.schema.json
# A starter patch: render it with  sinter render %[1]s.yaml
# (audition new renders at low volume). Every key is in the README;
# sinter.schema.json beside it lets an editor check and complete it.
name: %[1]s
sample_rate: 48000
bit_depth: 24
keys: {from: C2, to: C6, step: 3}   # root keys; the sampler fills the keys between
# tuning: {scale: my-scale.scl}    # tune the keys from a scale file instead of 12-TET
velocities: [64, 127]              # one layer per velocity
layer_crossfade: 16                # the layers blend over 16 velocities (0: a hard switch)
hold: 2                            # seconds to note-off
tail: 1                            # seconds after it
normalize: {peak: -1 dBFS}         # one gain for the set
envelope: {attack: 0.01, decay: 0.4, sustain: 0.6, release: 0.8}
partials:
  - harmonics: 24
    amplitude: "vel / n"           # brighter when played harder
    tilt: -3                       # dB per octave
  - ratio: 2.01                    # a slightly sharp octave for shimmer
    amplitude: -18 dB
`

// schemaFile is the schema the starter patch's first line points at;
// init writes it beside the patch.
const schemaFile = "sinter.schema.json"

func initPatch(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("init", flag.ContinueOnError)
	name, code, ok := parseArgs(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	out := reporter{stdout: stdout, stderr: stderr, command: "init"}
	if err := patch.CheckName(name); err != nil {
		return out.fail(exitUsage, err)
	}
	file := name + ".yaml"
	written, err := writeNew(file, fmt.Appendf(nil, starterPatch, name))
	if err != nil {
		return out.fail(exitFailure, err)
	}
	if !written {
		return out.fail(exitUsage, fmt.Errorf("%s exists; init never overwrites a patch", file))
	}
	// The first line of the patch points an editor at the schema, so it
	// must be there; one already there is kept, whoever wrote it.
	schemaWritten, err := writeNew(schemaFile, patch.JSONSchema())
	if err != nil {
		os.Remove(file)
		return out.fail(exitFailure, err)
	}
	if schemaWritten {
		fmt.Fprintf(stdout, "wrote %s and %s, the schema its first line points an editor at\n", file, schemaFile)
	} else {
		fmt.Fprintf(stdout, "wrote %s; kept the %s already there, which its first line points an editor at (sinter schema prints this version's)\n", file, schemaFile)
	}
	fmt.Fprintf(stdout, "render it with: sinter render %s\n", file)
	return exitOK
}

// writeNew writes data to a new file; it reports false, writing nothing,
// when the file exists.
func writeNew(file string, data []byte) (bool, error) {
	f, err := os.OpenFile(file, os.O_WRONLY|os.O_CREATE|os.O_EXCL, 0o644)
	if errors.Is(err, os.ErrExist) {
		return false, nil
	}
	if err != nil {
		return false, err
	}
	_, err = f.Write(data)
	if err = errors.Join(err, f.Close()); err != nil {
		os.Remove(file)
		return false, fmt.Errorf("cannot write %s: %w", file, err)
	}
	return true, nil
}
