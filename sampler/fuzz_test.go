package sampler_test

import (
	"encoding/binary"
	"errors"
	"hash/crc32"
	"testing"

	"chord/sampler"
	"chord/sampler/targets"
)

// FuzzStateUnmarshal: any byte string decodes to a state or fails with
// ErrCorruptState, never panics; a decoded state re-encodes to the same
// bytes. Each input is tried as it is and with a valid CRC-32C appended, so
// the fuzzer also reaches the parser behind the checksum.
func FuzzStateUnmarshal(f *testing.F) {
	tg := targets.StdNormal{D: 2}
	st, err := sampler.InitBall(bg, tg, []float64{0, 0}, []float64{1, 1}, sampler.InitSettings{Walkers: 6, Seed: 1, Workers: 1})
	if err != nil {
		f.Fatal(err)
	}
	good, _ := st.MarshalBinary()
	f.Add(good)
	f.Add(good[:len(good)-4])
	f.Add(good[:20])
	f.Add([]byte("chordsmp"))
	f.Fuzz(func(t *testing.T, b []byte) {
		decode(t, b)
		decode(t, binary.LittleEndian.AppendUint32(append([]byte(nil), b...), crc32.Checksum(b, crc32.MakeTable(crc32.Castagnoli))))
	})
}

func decode(t *testing.T, b []byte) {
	var s sampler.State
	err := s.UnmarshalBinary(b)
	if err != nil {
		if !errors.Is(err, sampler.ErrCorruptState) {
			t.Fatalf("error %v does not wrap ErrCorruptState", err)
		}
		return
	}
	again, err := s.MarshalBinary()
	if err != nil {
		t.Fatal(err)
	}
	if string(again) != string(b) {
		t.Fatal("decoded state re-encodes differently")
	}
}
