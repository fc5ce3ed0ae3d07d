package sampleset

import (
	"fmt"
	"os"
	"path/filepath"
	"sync"
	"unsafe"
)

// spills keeps rendered notes between the two passes of a build: each
// worker of the first pass appends its notes to one file of its own in the
// staging folder, so a failed or interrupted build removes them with the
// folder, and a set of any size costs a handful of files rather than one
// per note, whose creation costs more than their writing on some file
// systems. The samples are stored exactly as rendered, float64 in this
// machine's byte order, since the same process reads them back.
type spills struct {
	dir   string
	mu    sync.Mutex
	files []*os.File
	at    []spillPlace // by note
}

// spillPlace is where one note's samples are: file index and byte offset,
// or file −1 for a note that was not kept.
type spillPlace struct {
	file   int
	offset int64
}

// spillWriter is one worker's file.
type spillWriter struct {
	file   *os.File
	index  int
	offset int64
}

func newSpills(dir string, notes int) *spills {
	s := &spills{dir: dir, at: make([]spillPlace, notes)}
	for i := range s.at {
		s.at[i].file = -1
	}
	return s
}

// float64Bytes views samples as their bytes, without copying.
func float64Bytes(samples []float64) []byte {
	if len(samples) == 0 {
		return nil
	}
	return unsafe.Slice((*byte)(unsafe.Pointer(&samples[0])), len(samples)*8)
}

// keep appends note's samples to the worker's spill file, creating it on
// first use.
func (s *spills) keep(w *worker, note int, samples []float64) error {
	if w.spill == nil {
		s.mu.Lock()
		index := len(s.files)
		path := filepath.Join(s.dir, fmt.Sprintf(".spill-%d.f64", index))
		f, err := os.Create(path)
		if err == nil {
			s.files = append(s.files, f)
		}
		s.mu.Unlock()
		if err != nil {
			return fmt.Errorf("cannot create %s: %w", path, err)
		}
		w.spill = &spillWriter{file: f, index: index}
	}
	sw := w.spill
	if _, err := sw.file.Write(float64Bytes(samples)); err != nil {
		return fmt.Errorf("cannot write %s: %w", sw.file.Name(), err)
	}
	s.at[note] = spillPlace{file: sw.index, offset: sw.offset}
	sw.offset += int64(len(samples)) * 8
	return nil
}

// kept reports whether note's samples were kept.
func (s *spills) kept(note int) bool { return s.at[note].file >= 0 }

// read reads note's count samples back into the worker's buffer.
func (s *spills) read(w *worker, note, count int) ([]float64, error) {
	if cap(w.buf) < count {
		w.buf = make([]float64, count)
	}
	w.buf = w.buf[:count]
	at := s.at[note]
	f := s.files[at.file]
	if _, err := f.ReadAt(float64Bytes(w.buf), at.offset); err != nil {
		return nil, fmt.Errorf("cannot read back %s: %w", f.Name(), err)
	}
	return w.buf, nil
}

// remove closes and deletes the files, which must not be swapped in with
// the set.
func (s *spills) remove() error {
	var first error
	for _, f := range s.files {
		f.Close()
		if err := os.Remove(f.Name()); err != nil && first == nil {
			first = fmt.Errorf("cannot remove %s: %w", f.Name(), err)
		}
	}
	s.files = nil
	return first
}
