// Package compressed opens line-list files that may be compressed, as
// the spectroscopic databases distribute them: bzip2 (.bz2: ExoMol,
// HITEMP) and gzip (.gz).
//
// bzip2 is decoded by github.com/cosnicolaou/pbzip2, which finds the
// independent bzip2 blocks of a file and decodes them on several
// goroutines. Measured on a 100 MB ExoMol-style transition file on this
// two-core machine (CPU time, one decoder at a time): the standard
// library's compress/bzip2 37 MB/s per core, pbzip2 48 MB/s per core
// (github.com/dsnet/compress 49 MB/s, without the block parallelism); see
// benchmarks/lines_test.go, BenchmarkBzip2.
package compressed

import (
	"bufio"
	"compress/gzip"
	"context"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/cosnicolaou/pbzip2"
)

// Open opens path for reading, decompressing it when its name ends in
// .bz2 or .gz; workers is the number of goroutines a bzip2 file is
// decoded on (at least 1). Close releases the file and the decoder.
func Open(path string, workers int) (io.ReadCloser, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	switch {
	case strings.HasSuffix(path, ".bz2"):
		ctx, cancel := context.WithCancel(context.Background())
		r := pbzip2.NewReader(ctx, bufio.NewReaderSize(f, 1<<20),
			pbzip2.DecompressionOptions(pbzip2.BZConcurrency(max(1, workers))))
		return &reader{r: r, close: func() error { cancel(); return f.Close() }}, nil
	case strings.HasSuffix(path, ".gz"):
		z, err := gzip.NewReader(bufio.NewReaderSize(f, 1<<20))
		if err != nil {
			f.Close()
			return nil, fmt.Errorf("%s: %w", path, err)
		}
		return &reader{r: z, close: func() error { z.Close(); return f.Close() }}, nil
	}
	return f, nil
}

// Name strips a compression suffix (.bz2, .gz) from a file name.
func Name(path string) string {
	return strings.TrimSuffix(strings.TrimSuffix(path, ".bz2"), ".gz")
}

type reader struct {
	r     io.Reader
	close func() error
}

func (r *reader) Read(p []byte) (int, error) { return r.r.Read(p) }
func (r *reader) Close() error               { return r.close() }
