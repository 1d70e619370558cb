package build

import (
	"cmp"
	"container/heap"
	"context"
	"errors"
	"fmt"
	"io"
	"slices"
	"sync"

	"chord/forward/opacity/lbl"
)

// A stream delivers the lines of many line-list files (each sorted by
// wavenumber, as HITRAN, HITEMP, CDSD and ExoMol publish them) as one list
// in ascending wavenumber: an lbl.LineSource.
//
// Each file is decompressed and parsed on a goroutine of its own, ahead of
// need, into batches of batchLines lines held in a channel of chanBatches
// batches; the files are merged in order of their first lines. A file is
// started when the merge comes within reach of its first line, and
// prefetch files more are started ahead, so that decoding runs on every
// core while the build computes; a file's memory is released when it is
// finished. Lines that appear in several files (overlapping downloads) are
// kept once, with the broadening parameters of every copy
// (lbl.MergeLines). The memory held is at most (files open at once) x
// chanBatches x batchLines lines (about 2.5 MB per file) plus each open
// file's decoder (a few MB for bzip2), whatever the length of the list.
type stream struct {
	ctx    context.Context
	cancel context.CancelFunc
	files  []*streamFile // in order of first line
	next   int           // next file to start
	open   fileHeap
	ahead  int // files started ahead of need
	group  []lbl.Line
	// errOnce keeps the first error of a producer.
	mu  sync.Mutex
	err error
}

const (
	batchLines  = 4096
	chanBatches = 4
)

// batches recycles the producers' batches.
var batches = sync.Pool{New: func() any { b := make([]lbl.Line, 0, batchLines); return &b }}

func newBatch() []lbl.Line { return (*batches.Get().(*[]lbl.Line))[:0] }

func freeBatch(b []lbl.Line) {
	if cap(b) == batchLines {
		batches.Put(&b)
	}
}

// streamFile is one file: how to read it, and its reader when open.
type streamFile struct {
	name  string
	first float64 // wavenumber of its first line in range (+Inf: none)
	scan  func(ctx context.Context, fn func(*lbl.Line) error) error
	ch    chan []lbl.Line
	cur   []lbl.Line
	pos   int
}

var errFirstFound = errors.New("first line found")

// newStream peeks at each file's first line in [lo, hi] cm^-1 (decoding
// the start of the file) and orders the files by it. Files without a line
// in range are left out.
func newStream(files []*streamFile, prefetch int) (*stream, error) {
	for _, f := range files {
		f.first = -1
		err := f.scan(context.Background(), func(l *lbl.Line) error {
			f.first = l.Nu
			return errFirstFound
		})
		if err != nil && !errors.Is(err, errFirstFound) {
			return nil, err
		}
	}
	kept := files[:0]
	for _, f := range files {
		if f.first >= 0 {
			kept = append(kept, f)
		}
	}
	slices.SortStableFunc(kept, func(a, b *streamFile) int { return cmp.Compare(a.first, b.first) })
	ctx, cancel := context.WithCancel(context.Background())
	return &stream{ctx: ctx, cancel: cancel, files: kept, ahead: max(prefetch, 1)}, nil
}

// start runs file f's producer.
func (s *stream) start(f *streamFile) {
	f.ch = make(chan []lbl.Line, chanBatches)
	go func() {
		defer close(f.ch)
		batch := newBatch()
		prev := 0.0
		err := f.scan(s.ctx, func(l *lbl.Line) error {
			if l.Nu < prev {
				return fmt.Errorf("opacity: %s: lines are not in ascending wavenumber (%g cm^-1 after %g cm^-1); sort the file", f.name, l.Nu, prev)
			}
			prev = l.Nu
			batch = append(batch, *l)
			if len(batch) == batchLines {
				select {
				case f.ch <- batch:
				case <-s.ctx.Done():
					return s.ctx.Err()
				}
				batch = newBatch()
			}
			return nil
		})
		if err == nil && len(batch) > 0 {
			select {
			case f.ch <- batch:
			case <-s.ctx.Done():
			}
		}
		if err != nil && !errors.Is(err, context.Canceled) {
			s.mu.Lock()
			if s.err == nil {
				s.err = err
			}
			s.mu.Unlock()
			s.cancel()
		}
	}()
}

// advance moves f to its next line; false at its end.
func (s *stream) advance(f *streamFile) bool {
	f.pos++
	for f.pos >= len(f.cur) {
		b, ok := <-f.ch
		if f.cur != nil {
			freeBatch(f.cur)
			f.cur = nil
		}
		if !ok {
			return false
		}
		f.cur, f.pos = b, 0
	}
	return true
}

// activate opens the files whose first line is at or below nu, and
// starts the ones after them ahead of need.
func (s *stream) activate(nu float64) {
	for s.next < len(s.files) && s.files[s.next].first <= nu {
		f := s.files[s.next]
		if f.ch == nil {
			s.start(f)
		}
		f.pos = -1
		if s.advance(f) {
			heap.Push(&s.open, f)
		}
		s.next++
	}
	for i := s.next; i < min(s.next+s.ahead, len(s.files)); i++ {
		if s.files[i].ch == nil {
			s.start(s.files[i])
		}
	}
}

// Next implements lbl.LineSource.
func (s *stream) Next(dst []lbl.Line) ([]lbl.Line, error) {
	n0 := len(dst)
	for len(dst)-n0 < batchLines {
		nu := float64(0)
		if len(s.open) > 0 {
			nu = s.open[0].line().Nu
		}
		if s.next < len(s.files) && (len(s.open) == 0 || s.files[s.next].first <= nu) {
			s.activate(max(nu, s.files[s.next].first))
			continue
		}
		if len(s.open) == 0 {
			break
		}
		f := s.open[0]
		l := *f.line()
		if len(s.group) > 0 && l.Nu != s.group[0].Nu {
			dst = s.flush(dst)
		}
		s.group = append(s.group, l)
		if s.advance(f) {
			heap.Fix(&s.open, 0)
		} else {
			heap.Pop(&s.open)
		}
	}
	if err := s.failed(); err != nil {
		return dst, err
	}
	if len(s.open) == 0 && s.next == len(s.files) {
		dst = s.flush(dst)
		if len(dst) == n0 {
			return dst, io.EOF
		}
	}
	return dst, nil
}

// flush appends the lines of one wavenumber, each once.
func (s *stream) flush(dst []lbl.Line) []lbl.Line {
	if len(s.group) == 1 {
		dst = append(dst, s.group[0])
	} else if len(s.group) > 1 {
		dst = append(dst, lbl.MergeLines(s.group)...)
	}
	s.group = s.group[:0]
	return dst
}

func (s *stream) failed() error {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.err
}

// Close stops the producers.
func (s *stream) Close() {
	s.cancel()
	for _, f := range s.files {
		if f.ch != nil {
			for range f.ch { // let the producer see the cancel and end
			}
		}
	}
}

func (f *streamFile) line() *lbl.Line { return &f.cur[f.pos] }

// fileHeap orders open files by their current line.
type fileHeap []*streamFile

func (h fileHeap) Len() int { return len(h) }
func (h fileHeap) Less(i, j int) bool {
	a, b := h[i].line(), h[j].line()
	if a.Nu != b.Nu {
		return a.Nu < b.Nu
	}
	return h[i].first < h[j].first
}
func (h fileHeap) Swap(i, j int) { h[i], h[j] = h[j], h[i] }
func (h *fileHeap) Push(x any)   { *h = append(*h, x.(*streamFile)) }
func (h *fileHeap) Pop() any {
	old := *h
	f := old[len(old)-1]
	*h = old[:len(old)-1]
	return f
}
