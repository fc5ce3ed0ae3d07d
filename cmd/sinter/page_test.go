package main

import (
	"io"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestPageCommands: render --page writes the page with the set; page
// writes it into a set rendered without it; serve serves it on loopback
// until stopped; each refuses what it cannot do, with its status.
func TestPageCommands(t *testing.T) {
	good := writePatch(t, smallPatch)
	withPage := filepath.Join(t.TempDir(), "with")
	if code, _, stderr := runCLI("render", good, "-o", withPage, "--page", "--quiet"); code != exitOK {
		t.Fatalf("render --page: exit %d: %s", code, stderr)
	}
	if _, err := os.Stat(filepath.Join(withPage, "index.html")); err != nil {
		t.Errorf("render --page wrote no page: %v", err)
	}
	without := filepath.Join(t.TempDir(), "without")
	if code, _, stderr := runCLI("render", good, "-o", without, "--quiet"); code != exitOK {
		t.Fatalf("render: exit %d: %s", code, stderr)
	}
	cases := []struct {
		name   string
		args   []string
		code   int
		stdout string
		stderr string
	}{
		{"serve without a page", []string{"serve", without}, exitFailure, "", "has no index.html; write it with: sinter page " + without},
		{"page of a set", []string{"page", without}, exitOK, "to play the set, run: sinter serve " + without, ""},
		{"page of a folder without a set", []string{"page", t.TempDir()}, exitFailure, "", "holds no set sinter rendered"},
		{"page with no folder", []string{"page"}, exitUsage, "", "expected one argument, got 0"},
		{"serve on a bad port", []string{"serve", withPage, "--port", "70000"}, exitUsage, "", "--port must be 0..65535"},
		{"page of a shard render", []string{"render", good, "--shard", "1/2", "--page"}, exitUsage, "", "a shard has none"},
	}
	for _, c := range cases {
		code, stdout, stderr := runCLI(c.args...)
		if code != c.code || !strings.Contains(stdout, c.stdout) || !strings.Contains(stderr, c.stderr) {
			t.Errorf("%s: exit %d, stdout %q, stderr %q; want %d, %q, %q", c.name, code, stdout, stderr, c.code, c.stdout, c.stderr)
		}
	}
	pictures, _ := filepath.Glob(filepath.Join(without, "*.png"))
	if len(pictures) != 4 {
		t.Errorf("sinter page drew %d pictures for 4 files", len(pictures))
	}
	if code, _, stderr := runCLI("verify", without); code != exitOK {
		t.Errorf("the page and its pictures upset verify: %s", stderr)
	}

	addrs := make(chan string, 1)
	stops := make(chan func(), 1)
	serveReady = func(addr string, stop func()) { addrs <- addr; stops <- stop }
	defer func() { serveReady = nil }()
	done := make(chan int)
	var out strings.Builder
	go func() { done <- serve([]string{without, "--port", "0"}, &out, io.Discard) }()
	addr := <-addrs
	if !strings.HasPrefix(addr, "127.0.0.1:") {
		t.Errorf("serve listens on %s, not loopback", addr)
	}
	res, err := http.Get("http://" + addr + "/")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(res.Body)
	res.Body.Close()
	if res.StatusCode != 200 || !strings.Contains(string(body), "test-tone") {
		t.Errorf("GET /: %d, %d bytes", res.StatusCode, len(body))
	}
	(<-stops)()
	if code := <-done; code != exitOK || !strings.Contains(out.String(), "serving "+without+" at http://"+addr+"/") {
		t.Errorf("serve: exit %d, said %q", code, out.String())
	}
}
