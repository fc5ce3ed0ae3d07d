package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"net"
	"net/http"
	"os"
	"os/signal"
	"path/filepath"
	"runtime"
	"strconv"
	"syscall"
	"time"

	"sinter/synth/page"
	"sinter/synth/sampleset"
)

// pageExtras writes the review page into a set, drawing jobs pictures at
// once.
func pageExtras(jobs int) sampleset.Extras {
	return func(dir string, write sampleset.WriteFunc) error { return page.Write(dir, jobs, write) }
}

func writePage(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("page", flag.ContinueOnError)
	jobs := fs.Int("jobs", runtime.NumCPU(), "draw `N` pictures at once")
	noWait := fs.Bool("no-wait", false, "fail at once (status 1) while another process writes DIR, instead of waiting for it")
	dir, code, ok := parseArgs(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	if *jobs < 1 {
		fmt.Fprintf(stderr, "sinter page: --jobs must be 1 or more, got %d\n", *jobs)
		return exitUsage
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	opts := sampleset.Options{NoWait: *noWait, Notice: noticePrinter(stderr, "page")}
	if err := sampleset.AddToSet(ctx, dir, opts, pageExtras(*jobs)); err != nil {
		fmt.Fprintf(stderr, "sinter page: %v\n", err)
		return exitFailure
	}
	fmt.Fprintf(stdout, "wrote %s and a picture of each file; to play the set, run: sinter serve %s\n", filepath.Join(dir, page.FileName), dir)
	return exitOK
}

// serveReady, when set, is told the address serve listens on and given a
// function that stops it as Ctrl-C does; tests set it to find a port the
// system chose and to stop the server.
var serveReady func(addr string, stop func())

func serve(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	port := fs.Int("port", 8410, "listen on port `N` of 127.0.0.1 (0: any free port)")
	dir, code, ok := parseArgs(fs, args, stdout, stderr)
	if !ok {
		return code
	}
	if *port < 0 || *port > 65535 {
		fmt.Fprintf(stderr, "sinter serve: --port must be 0..65535, got %d\n", *port)
		return exitUsage
	}
	if info, err := os.Stat(filepath.Join(dir, page.FileName)); err != nil || info.IsDir() {
		fmt.Fprintf(stderr, "sinter serve: %s has no %s; write it with: sinter page %s\n", dir, page.FileName, dir)
		return exitFailure
	}
	// Loopback only: the page is for the person at this machine.
	ln, err := net.Listen("tcp", net.JoinHostPort("127.0.0.1", strconv.Itoa(*port)))
	if err != nil {
		fmt.Fprintf(stderr, "sinter serve: %v\n", err)
		return exitFailure
	}
	addr := ln.Addr().String()
	fmt.Fprintf(stdout, "serving %s at http://%s/ (Ctrl-C stops)\n", dir, addr)
	srv := &http.Server{Handler: page.Handler(dir), ReadHeaderTimeout: 10 * time.Second}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if serveReady != nil {
		serveReady(addr, stop)
	}
	go func() {
		<-ctx.Done()
		shutdown, cancel := context.WithTimeout(context.Background(), 2*time.Second)
		defer cancel()
		srv.Shutdown(shutdown)
	}()
	if err := srv.Serve(ln); err != nil && !errors.Is(err, http.ErrServerClosed) {
		fmt.Fprintf(stderr, "sinter serve: %v\n", err)
		return exitFailure
	}
	return exitOK
}
