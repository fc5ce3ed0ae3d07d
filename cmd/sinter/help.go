package main

import (
	"flag"
	"fmt"
	"io"
	"strings"
	"text/tabwriter"
)

// commandDoc is what help says about one command; its flags come from
// the command's own flag set, so help cannot list a flag the command
// does not take.
type commandDoc struct {
	name, usage, about, example string
	// keys and json say the command takes --keys LIST and --json, whose
	// paragraphs its help then carries.
	keys, json bool
}

// commands is every command, in the order the overview lists them.
var commands = []commandDoc{
	{name: "render", keys: true, json: true,
		usage:   "sinter render PATCH.yaml [-o DIR] [--keys LIST] [--jobs N] [--quiet] [--json] [--allow-large] [--force] [--shard K/N|auto] [--no-wait] [--page]",
		about:   "Render every root key and velocity layer into DIR (default: the\npatch's output.dir): WAV (or FLAC) files, an SFZ mapping and\nmanifest.json, and with --page the review page.\nFiles the set in DIR already holds unchanged are kept, not rendered.\nOne render writes DIR at a time: another waits, saying who holds it,\nor with --no-wait fails at once. A render refuses at once a set that\nwould not fit in the free space, and removes what killed renders of\nDIR left beside it.",
		example: "sinter render harbor-glass.yaml -o out/harbor-glass --keys C4-C5 --jobs 4"},
	{name: "merge", json: true,
		usage:   "sinter merge PATCH.yaml [-o DIR] SHARD_DIR... [--json] [--no-wait]",
		about:   "Join the folders of the shards of one set (render --shard) into DIR.",
		example: "sinter merge pad.yaml -o pad-set shard-1 shard-2 shard-3"},
	{name: "check", keys: true, json: true,
		usage:   "sinter check PATCH.yaml [--keys LIST] [--json]",
		about:   "Validate the patch and print the plan without rendering: files,\nformat, bytes, the oscillator and noise work render will do, the\nvelocity layers and their crossfades, per key the partials kept by the\nband limit, the loop and the noise bands, and with a scale file each\nkey's frequency and its offset from 12-TET.",
		example: "sinter check harbor-glass.yaml --keys C4,E4"},
	{name: "verify",
		usage:   "sinter verify DIR",
		about:   "Read a rendered set back and check every file against its manifest,\nand that the mapping plays each of them and nothing else, with the\nvelocities, crossfades and (for a set tuned by a scale) the pitch of\nevery key the manifest records. Removes what killed renders of DIR\nleft beside it, saying how much it freed.",
		example: "sinter verify out/harbor-glass"},
	{name: "page",
		usage:   "sinter page DIR [--jobs N] [--no-wait]",
		about:   "Write the review page of the set in DIR: index.html, which plays the\nset in a browser as its mapping would (keyboard, typed keys A-K with\nZ and X for octaves, MIDI where the browser has it) and shows every\nfile's figures from the manifest, marking levels over the ceiling and\nseam ratios above 1, and beside each file a picture of its spectrum\nand one period. The page needs nothing from outside DIR; it starts at\n-20 dB. Browsers load the samples only from a served folder: see\nsinter serve.",
		example: "sinter page out/harbor-glass"},
	{name: "serve",
		usage:   "sinter serve DIR [--port N]",
		about:   "Serve the set's folder DIR, with its review page, on 127.0.0.1 until\nCtrl-C, read only, and print the address to open.",
		example: "sinter serve out/harbor-glass --port 8410"},
	{name: "plot",
		usage:   "sinter plot PATCH.yaml [--key C4] [--velocity V] [-o FILE.png] [--width W] [--height H]\n  sinter plot RECORDING.wav [--key NOTE] [-o FILE.png] [--width W] [--height H]",
		about:   "Draw one note as a PNG, on its file's scale: its spectrum after the\nband limit, noise bands shaded, the levels of its loudest partials and\nbands with the note-off and the loop marked, and one period of its\nwaveform. Given a recording, draw its spectrogram with the partials\nanalyze measures laid over it, beside the spectrogram of the patch\nanalyze would write.",
		example: "sinter plot harbor-glass.yaml --key C4 --velocity 110 -o c4.png"},
	{name: "analyze", json: true,
		usage:   "sinter analyze RECORDING.wav [-o PATCH.yaml] [--key NOTE | --f0 HZ] [--partials N] [--floor DB] [--channel left|right|sum] [--json] [--plot FILE.png]",
		about:   "Measure a recorded tone and write it as a patch: its pitch, its\npartials, the law their frequencies follow and each one's envelope,\nrendered back and compared with the recording. Reads 8- to 32-bit PCM\nand 32- or 64-bit float WAV, mono or stereo, 8 to 384 kHz.",
		example: "sinter analyze glass-bowl.wav -o glass-bowl.yaml --plot glass-bowl.png"},
	{name: "init",
		usage:   "sinter init NAME",
		about:   "Write NAME.yaml, a starter patch that renders as it is, and\nsinter.schema.json beside it unless one is there.",
		example: "sinter init harbor-glass"},
	{name: "schema",
		usage:   "sinter schema",
		about:   "Print the JSON Schema of the patch language, for editors.",
		example: "sinter schema > sinter.schema.json"},
	{name: "help",
		usage:   "sinter help [COMMAND]",
		about:   "Print this text, or one command's usage, flags and an example\n(as sinter COMMAND --help does).",
		example: "sinter help render"},
}

const (
	jsonHelp = `--json (render, check, merge and analyze) prints one JSON document on stdout:
{"ok": true, "result": ...}, or {"ok": false, "errors": [{"file", "line",
"column", "path", "message"}]}, with the exit status the command has
without it.`
	keysHelp = `LIST (render and check) is a comma-separated list of keys and ranges:
C4,E4 or 60-72 or C4-C5.`
	exitHelp = "Exit status: 0 success, 1 rendering or writing failed (no room, or\nDIR busy with --no-wait), 2 usage, patch or recording error."
	// versionHelp is the overview's entry for --version, which is no
	// command of the table.
	versionHelp = `  sinter --version
      Print the version, the set of kernels in use and why it was chosen:
      the widest the processor runs (avx512, avx2 or plain), or the one
      SINTER_KERNEL names.
`
)

// overview is what sinter help prints: every command with what it does,
// then what several share.
func overview() string {
	var b strings.Builder
	b.WriteString("sinter compiles a patch of sine partials into a sampler-ready sample set.\n\nUsage:\n")
	for _, c := range commands {
		fmt.Fprintf(&b, "  %s\n      %s\n", c.usage, strings.ReplaceAll(c.about, "\n", "\n      "))
	}
	b.WriteString(versionHelp)
	fmt.Fprintf(&b, "\nsinter help COMMAND, or sinter COMMAND --help, prints one command's usage,\nflags and an example.\n\n%s\n\n%s\n\n%s\n", jsonHelp, keysHelp, exitHelp)
	return b.String()
}

// docOf returns the help of the command name.
func docOf(name string) (commandDoc, bool) {
	for _, c := range commands {
		if c.name == name {
			return c, true
		}
	}
	return commandDoc{}, false
}

// printHelp prints the help of the command whose flags fs holds: its
// usage, what it does, its flags, the paragraphs it shares with others
// and an example.
func printHelp(w io.Writer, fs *flag.FlagSet) {
	c, _ := docOf(fs.Name())
	fmt.Fprintf(w, "Usage: %s\n\n%s\n", c.usage, c.about)
	any := false
	tw := tabwriter.NewWriter(w, 0, 0, 3, ' ', 0)
	fs.VisitAll(func(f *flag.Flag) {
		if !any {
			fmt.Fprintln(tw, "\nFlags:")
			any = true
		}
		arg, text := flag.UnquoteUsage(f)
		name := "--" + f.Name
		if len(f.Name) == 1 {
			name = "-" + f.Name
		}
		if arg != "" {
			name += " " + arg
		}
		if f.DefValue != "" && f.DefValue != "0" && f.DefValue != "false" {
			text += fmt.Sprintf(" (default %s)", f.DefValue)
		}
		fmt.Fprintf(tw, "  %s\t%s\n", name, text)
	})
	tw.Flush()
	if c.json {
		fmt.Fprintf(w, "\n%s\n", jsonHelp)
	}
	if c.keys {
		fmt.Fprintf(w, "\n%s\n", keysHelp)
	}
	fmt.Fprintf(w, "\nExample:\n  %s\n\n%s\n", c.example, exitHelp)
}

// help prints the overview, or with a command's name that command's help,
// which the command prints itself when asked with --help.
func help(args []string, stdout, stderr io.Writer) int {
	switch {
	case len(args) == 0 || len(args) == 1 && (args[0] == "help" || args[0] == "-h" || args[0] == "-help" || args[0] == "--help"):
		fmt.Fprint(stdout, overview())
		return exitOK
	case len(args) > 1:
		fmt.Fprintf(stderr, "sinter help: expected one command, got %d; run \"sinter help\" for the list\n", len(args))
		return exitUsage
	}
	run, ok := commandRuns[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "sinter help: unknown command %q; run \"sinter help\" for the list\n", args[0])
		return exitUsage
	}
	return run([]string{"--help"}, stdout, stderr)
}
