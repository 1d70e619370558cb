package campaign

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"

	"github.com/BurntSushi/toml"

	"chord/config"
	"chord/forward/opacity"
	"chord/internal/atomicfile"
	"chord/internal/filehash"
	"chord/internal/logto"
	"chord/internal/runlock"
	"chord/internal/table"
	"chord/internal/version"
	"chord/obs"
	"chord/report"
	"chord/retrieve"
	"chord/sampler"
	"chord/simulate"
)

// Grids of fits (chord grid): a base scenario or retrieval configuration
// and axes of values to vary, expanded into one fit per point of their
// cartesian product (the last axis varying fastest).
//
// A grid file (TOML; unknown keys are errors):
//
//	base = "scenario.toml"   # a scenario (no [[observations]]: each point simulates its
//	                         # observation) or a retrieval configuration; relative to the grid file
//	seed = 100               # optional: point i gets sampler.seed = seed + i when the base
//	                         # sets none (default: a seed derived from the grid's identity)
//	[observe]                # scenario bases: how each point is observed
//	noise_ppm = 60           # constant single-transit error, ppm (or noise_file)
//	transits = 1             # the error falls as 1/sqrt(transits)
//	bins_file = "bins.csv"   # or wavelength_range_um = [1, 5] with resolving_power = 50,
//	noise_file = "n.csv"     # or neither: the scenario's [spectrum] bins
//	scatter = false          # draw Gaussian noise (seed noise_seed + point), default noise-free
//	noise_seed = 0
//	[set]                    # fixed overrides of the base, by key path
//	sampler.steps = 2000     # or "sampler.steps" = 2000
//	[[axes]]
//	key = "observe.noise_ppm"           # observe.noise_ppm, observe.transits, observe.noise_seed,
//	values = [30, 60, 120]              # or any key path of the base's schema
//	[[axes]]
//	key = "clouds.cloud_top_bar"
//	values = [1e-3, 1e-2, 1e-1, 1]
//	[slurm]                  # defaults of chord grid --slurm (flags override)
//	time = "2:00:00"
//	cpus_per_task = 2
//	memory = "2G"
//	partition = "short"
//
// A grid directory holds
//
//	resolved-grid.toml      the resolved grid and its identity (SHA-256 of the resolved grid)
//	base.toml               a copy of the base file
//	index.csv, index.parquet   point number, directory and settings of every point
//	points/p0000/           one point: observation.csv (scenario bases), fit.toml, run/
//	                        (a normal run directory), chord.lock (held while the point runs), log.txt,
//	                        error.txt (the error of a failed attempt)
//	slurm/                  job-array scripts, jobs.txt (submissions), logs/
//	summary.csv, summary.parquet, comparison.txt, comparison.json, widths*.png   (collect)
//
// Expanding again into the same directory with the same grid changes
// nothing and keeps every point; a different grid is refused before
// anything is written.

// ErrNoGrid is the error of a directory that holds no grid.
var ErrNoGrid = errors.New("holds no grid")

// GridFileName is the resolved grid in a grid directory.
const GridFileName = "resolved-grid.toml"

// MaxGridPoints bounds the points of one grid.
const MaxGridPoints = 100000

// GridSpec is a grid file as written by the user.
type GridSpec struct {
	Base    string         `toml:"base"`    // base scenario or retrieval configuration; required
	Seed    *int64         `toml:"seed"`    // first sampler seed; see the file comment
	Observe GridObserve    `toml:"observe"` // scenario bases only
	Set     map[string]any `toml:"set"`     // key path -> value, applied to every point
	Axes    []GridAxis     `toml:"axes"`    // at least one
	Slurm   SlurmSettings  `toml:"slurm"`
	// Renamed are the warnings of old key spellings the file used
	// (config.Renames), for the log.
	Renamed []string `toml:"-"`
}

// SetRenamed keeps the warnings of renamed keys (config.Renamer).
func (s *GridSpec) SetRenamed(w []string) { s.Renamed = append(s.Renamed, w...) }

// GridObserve is [observe]: how a scenario grid's points are observed
// (the options of chord simulate).
type GridObserve struct {
	NoisePPM          *float64  `toml:"noise_ppm,omitempty"`           // single-transit error per bin, ppm
	Transits          *int64    `toml:"transits,omitempty"`            // default 1
	BinsFile          string    `toml:"bins_file,omitempty"`           // bins table
	WavelengthRangeUm []float64 `toml:"wavelength_range_um,omitempty"` // [low, high], um; with resolving_power
	ResolvingPower    *float64  `toml:"resolving_power,omitempty"`     // of generated bins
	NoiseFile         string    `toml:"noise_file,omitempty"`          // bins table with error_ppm
	Scatter           bool      `toml:"scatter,omitempty"`             // default false: noise-free
	NoiseSeed         *int64    `toml:"noise_seed,omitempty"`          // default 0; point i uses noise_seed + i
}

// GridAxis is one [[axes]] table: a key and the values it takes.
type GridAxis struct {
	Key    string `toml:"key"`
	Values []any  `toml:"values"`
}

// GridSetting is one fixed override of [set].
type GridSetting struct {
	Key   string `toml:"key"`
	Value any    `toml:"value"`
}

// Observation axes (scenario bases).
const (
	AxisNoisePPM  = "observe.noise_ppm"
	AxisTransits  = "observe.transits"
	AxisNoiseSeed = "observe.noise_seed"
)

// gridRecord is grid.toml.
type gridRecord struct {
	Identity string `toml:"identity"`
	Version  string `toml:"chord_version"`
	Source   string `toml:"source"` // the grid file
	gridIdentity
	Slurm SlurmSettings `toml:"slurm"`
}

// gridIdentity is everything that decides the points: its TOML encoding's
// SHA-256 is the grid's identity.
type gridIdentity struct {
	Kind       string               `toml:"kind"` // "scenario" or "retrieval"
	Base       string               `toml:"base"` // absolute
	BaseSHA256 string               `toml:"base_sha256"`
	Seed       *int64               `toml:"seed,omitempty"`
	Observe    GridObserve          `toml:"observe"`
	Inputs     []retrieve.InputFile `toml:"inputs,omitempty"` // bins and noise files with their digests
	Set        []GridSetting        `toml:"set,omitempty"`
	Axes       []GridAxis           `toml:"axes"`
}

// GridPoint is one point of a grid.
type GridPoint struct {
	Index  int
	Name   string // directory name under points/, e.g. "p0007"
	Values []any  // one per axis
}

// Grid is an expanded grid directory.
type Grid struct {
	Dir    string // absolute
	rec    gridRecord
	Points []GridPoint
}

// Identity is the SHA-256 of the resolved grid.
func (g *Grid) Identity() string { return g.rec.Identity }

// Axes are the grid's axes.
func (g *Grid) Axes() []GridAxis { return g.rec.Axes }

// Slurm are the grid file's [slurm] defaults.
func (g *Grid) Slurm() SlurmSettings { return g.rec.Slurm }

// PointDir is the directory of point i.
func (g *Grid) PointDir(i int) string { return filepath.Join(g.Dir, "points", g.Points[i].Name) }

// RunDir is the run directory of point i.
func (g *Grid) RunDir(i int) string { return filepath.Join(g.PointDir(i), "run") }

// Settings describes point i's axis values, e.g. "observe.noise_ppm=30
// clouds.cloud_top_bar=0.01".
func (g *Grid) Settings(i int) string {
	s := make([]string, len(g.rec.Axes))
	for k, a := range g.rec.Axes {
		s[k] = a.Key + "=" + table.FormatValue(g.Points[i].Values[k])
	}
	return strings.Join(s, " ")
}

// expandAxes returns the cartesian product of the axes' values, the last
// axis varying fastest.
func expandAxes(axes []GridAxis) []GridPoint {
	n := 1
	for _, a := range axes {
		n *= len(a.Values)
	}
	width := max(4, len(strconv.Itoa(n-1)))
	pts := make([]GridPoint, n)
	for i := range pts {
		v := make([]any, len(axes))
		r := i
		for k := len(axes) - 1; k >= 0; k-- {
			m := len(axes[k].Values)
			v[k] = axes[k].Values[r%m]
			r /= m
		}
		pts[i] = GridPoint{Index: i, Name: fmt.Sprintf("p%0*d", width, i), Values: v}
	}
	return pts
}

// LoadGridSpec reads a grid file. Unknown keys are errors.
func LoadGridSpec(path string) (*GridSpec, error) {
	s := &GridSpec{}
	if _, err := config.DecodeStrict(path, s); err != nil {
		return nil, fmt.Errorf("grid %w", err)
	}
	return s, nil
}

// flattenSet turns [set] (nested by dotted keys) into sorted key paths.
func flattenSet(prefix string, m map[string]any, dst []GridSetting) []GridSetting {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		p := k
		if prefix != "" {
			p = prefix + "." + k
		}
		if sub, ok := m[k].(map[string]any); ok {
			dst = flattenSet(p, sub, dst)
			continue
		}
		dst = append(dst, GridSetting{Key: p, Value: m[k]})
	}
	return dst
}

// resolveGrid checks a grid file and resolves its paths; errors name the
// file and key.
func resolveGrid(specPath string, s *GridSpec) (*gridIdentity, *config.Config, []byte, error) {
	where := func(format string, a ...any) error {
		return fmt.Errorf("grid %s: %s", specPath, fmt.Sprintf(format, a...))
	}
	if s.Base == "" {
		return nil, nil, nil, where("base: give the base scenario or retrieval configuration (base = \"scenario.toml\")")
	}
	dir, err := filepath.Abs(filepath.Dir(specPath))
	if err != nil {
		return nil, nil, nil, err
	}
	abs := func(p string) string {
		if p == "" || filepath.IsAbs(p) {
			return p
		}
		return filepath.Join(dir, p)
	}
	id := &gridIdentity{Base: abs(s.Base), Seed: s.Seed, Observe: s.Observe}
	text, err := os.ReadFile(id.Base)
	if err != nil {
		return nil, nil, nil, where("base: %v", err)
	}
	id.BaseSHA256 = hex.EncodeToString(sha256Sum(text))
	base, err := config.Decode(string(text), id.Base, filepath.Dir(id.Base))
	if err != nil {
		return nil, nil, nil, err
	}
	id.Kind = "scenario"
	if len(base.Observations) > 0 {
		id.Kind = "retrieval"
	}
	if s.Seed != nil && *s.Seed < 0 {
		return nil, nil, nil, where("seed %d: must not be negative", *s.Seed)
	}
	if err := id.resolveObserve(abs); err != nil {
		return nil, nil, nil, where("%v", err)
	}
	probe, err := id.resolveSet(s.Set, &s.Renamed)
	if err != nil {
		return nil, nil, nil, where("%v", err)
	}
	for i := range s.Axes {
		if k, w := config.RenamedKey(s.Axes[i].Key); w != "" {
			s.Axes[i].Key = k
			s.Renamed = append(s.Renamed, fmt.Sprintf("axes[%d].key: %s", i+1, w))
		}
	}
	if err := id.checkAxes(s.Axes, probe); err != nil {
		return nil, nil, nil, where("%v", err)
	}
	id.Axes = s.Axes
	return id, base, text, nil
}

// resolveObserve makes [observe]'s files absolute (abs) and records their
// digests, and checks that it goes with the base.
func (id *gridIdentity) resolveObserve(abs func(string) string) error {
	o := &id.Observe
	o.BinsFile, o.NoiseFile = abs(o.BinsFile), abs(o.NoiseFile)
	for _, f := range []struct{ role, path string }{{"bins", o.BinsFile}, {"noise", o.NoiseFile}} {
		if f.path == "" {
			continue
		}
		h, _, err := filehash.File(f.path)
		if err != nil {
			return fmt.Errorf("observe: %v", err)
		}
		id.Inputs = append(id.Inputs, retrieve.InputFile{Role: f.role, Path: f.path, SHA256: h})
	}
	if id.Kind == "retrieval" && !reflect.ValueOf(*o).IsZero() {
		return fmt.Errorf("[observe]: the base %s is a retrieval configuration with [[observations]]; [observe] belongs to grids over a scenario", id.Base)
	}
	if len(o.WavelengthRangeUm) != 0 && len(o.WavelengthRangeUm) != 2 {
		return fmt.Errorf("observe.wavelength_range_um: give [low, high] in um")
	}
	return nil
}

// resolveSet records [set] as sorted key paths and checks each on an empty
// configuration, which it returns for the axes' checks.
func (id *gridIdentity) resolveSet(set map[string]any, renamed *[]string) (*config.Config, error) {
	id.Set = flattenSet("", set, nil)
	probe := &config.Config{}
	for i, st := range id.Set {
		if k, w := config.RenamedKey(st.Key); w != "" {
			id.Set[i].Key, st.Key = k, k
			*renamed = append(*renamed, "set: "+w)
		}
		if strings.HasPrefix(st.Key, "observe.") {
			return nil, fmt.Errorf("set.%s: give observation settings in [observe]", st.Key)
		}
		if err := setConfigKey(probe, st.Key, st.Value); err != nil {
			return nil, fmt.Errorf("set: %v", err)
		}
	}
	return probe, nil
}

// checkAxes checks the axes: keys, values (one kind, none twice, each
// settable on probe or an observation setting) and the number of points.
func (id *gridIdentity) checkAxes(axes []GridAxis, probe *config.Config) error {
	if len(axes) == 0 {
		return fmt.Errorf("no [[axes]]: give at least one axis (key and values)")
	}
	seen := map[string]bool{}
	for i, a := range axes {
		at := fmt.Sprintf("axis[%d] (key %q)", i, a.Key)
		if a.Key == "" {
			return fmt.Errorf("axis[%d]: no key", i)
		}
		if seen[a.Key] {
			return fmt.Errorf("%s: the key has two axes", at)
		}
		seen[a.Key] = true
		if len(a.Values) == 0 {
			return fmt.Errorf("%s: empty axis: give at least one value", at)
		}
		if err := sameKind(a.Values); err != nil {
			return fmt.Errorf("%s: %v", at, err)
		}
		vals := map[string]bool{}
		for _, v := range a.Values {
			f := table.FormatValue(v)
			if vals[f] {
				return fmt.Errorf("%s: value %s is given twice", at, f)
			}
			vals[f] = true
		}
		if strings.HasPrefix(a.Key, "observe.") {
			if id.Kind != "scenario" {
				return fmt.Errorf("%s: observation axes need a scenario base (%s has [[observations]])", at, id.Base)
			}
			if err := checkObserveAxis(a); err != nil {
				return fmt.Errorf("%s: %v", at, err)
			}
			continue
		}
		for _, st := range id.Set {
			if st.Key == a.Key {
				return fmt.Errorf("%s: also fixed in [set]", at)
			}
		}
		for _, v := range a.Values {
			if err := setConfigKey(probe, a.Key, v); err != nil {
				return fmt.Errorf("%s: %v", at, err)
			}
		}
	}
	n := 1
	for _, a := range axes {
		if n *= len(a.Values); n > MaxGridPoints {
			return fmt.Errorf("more than %d points: split the grid", MaxGridPoints)
		}
	}
	if seen[AxisNoisePPM] && seen[AxisTransits] {
		return fmt.Errorf("axes %s and %s: vary the noise one way", AxisNoisePPM, AxisTransits)
	}
	return nil
}

func checkObserveAxis(a GridAxis) error {
	for _, v := range a.Values {
		switch a.Key {
		case AxisNoisePPM:
			f, ok := table.ToFloat(v)
			if !ok || !(f > 0) || math.IsInf(f, 0) {
				return fmt.Errorf("noise level %s ppm: must be a positive number", table.FormatValue(v))
			}
		case AxisTransits, AxisNoiseSeed:
			n, ok := v.(int64)
			if !ok || n < 0 || (a.Key == AxisTransits && n < 1) {
				return fmt.Errorf("value %s: must be a whole number (transits at least 1, seeds not negative)", table.FormatValue(v))
			}
		default:
			return fmt.Errorf("unknown observation axis (observe.noise_ppm, observe.transits or observe.noise_seed)")
		}
	}
	return nil
}

// valueKind classifies a TOML value for tables: 'i' integer, 'f' number,
// 's' string, 'b' boolean, 'a' array.
func valueKind(v any) byte {
	switch v.(type) {
	case int64:
		return 'i'
	case float64:
		return 'f'
	case string:
		return 's'
	case bool:
		return 'b'
	}
	return 'a'
}

func sameKind(vals []any) error {
	k := axisKind(vals)
	if k == 0 {
		return errors.New("values of different types: give one type (numbers, strings, booleans or arrays)")
	}
	return nil
}

// axisKind is the column kind of an axis: 'i' when every value is an
// integer, 'f' when all are numbers, else the common kind; 0 when mixed.
func axisKind(vals []any) byte {
	k := valueKind(vals[0])
	for _, v := range vals[1:] {
		kv := valueKind(v)
		switch {
		case kv == k:
		case (kv == 'i' || kv == 'f') && (k == 'i' || k == 'f'):
			k = 'f'
		default:
			return 0
		}
	}
	return k
}

// setConfigKey sets the value at a dotted key path of the configuration
// schema (e.g. "clouds.cloud_top_bar", "atmosphere.gases.H2O",
// "sampler.seed"). A key the schema does not have, a table given a value,
// or a value of the wrong type is an error naming the key.
func setConfigKey(c *config.Config, key string, val any) error {
	v := reflect.ValueOf(c).Elem()
	parts := strings.Split(key, ".")
	for i, p := range parts {
		at := strings.Join(parts[:i], ".")
		if at == "" {
			at = "the configuration"
		}
		switch v.Kind() {
		case reflect.Struct:
			f, ok := tomlField(v, p)
			if !ok {
				return fmt.Errorf("key %s: unknown key: %s has no key %q", key, at, p)
			}
			v = f
		case reflect.Map:
			if i != len(parts)-1 {
				return fmt.Errorf("key %s: %s.%s is a value, not a table", key, at, p)
			}
			if v.IsNil() {
				v.Set(reflect.MakeMap(v.Type()))
			}
			e := reflect.New(v.Type().Elem()).Elem()
			if err := assignValue(e, val); err != nil {
				return fmt.Errorf("key %s: %w", key, err)
			}
			v.SetMapIndex(reflect.ValueOf(p), e)
			return nil
		case reflect.Slice:
			return fmt.Errorf("key %s: %s is an array of tables, which a grid cannot vary", key, at)
		default:
			return fmt.Errorf("key %s: %s is a value, not a table", key, at)
		}
	}
	switch {
	case v.Kind() == reflect.Struct, v.Kind() == reflect.Map:
		return fmt.Errorf("key %s: a table; give a key inside it", key)
	case v.Kind() == reflect.Slice && v.Type().Elem().Kind() == reflect.Struct:
		return fmt.Errorf("key %s: an array of tables, which a grid cannot vary", key)
	}
	if err := assignValue(v, val); err != nil {
		return fmt.Errorf("key %s: %w", key, err)
	}
	return nil
}

// tomlField finds the field of struct v whose TOML name is name, looking
// into embedded structs.
func tomlField(v reflect.Value, name string) (reflect.Value, bool) {
	t := v.Type()
	for i := range t.NumField() {
		f := t.Field(i)
		tag, _, _ := strings.Cut(f.Tag.Get("toml"), ",")
		if tag == "-" || !f.IsExported() {
			continue
		}
		if f.Anonymous && tag == "" && f.Type.Kind() == reflect.Struct {
			if fv, ok := tomlField(v.Field(i), name); ok {
				return fv, true
			}
			continue
		}
		if tag == name {
			return v.Field(i), true
		}
	}
	return reflect.Value{}, false
}

func assignValue(dst reflect.Value, val any) error {
	switch dst.Kind() {
	case reflect.Pointer:
		n := reflect.New(dst.Type().Elem())
		if err := assignValue(n.Elem(), val); err != nil {
			return err
		}
		dst.Set(n)
	case reflect.Float64:
		f, ok := table.ToFloat(val)
		if !ok {
			return fmt.Errorf("value %s: want a number", table.FormatValue(val))
		}
		dst.SetFloat(f)
	case reflect.Int, reflect.Int64:
		n, ok := val.(int64)
		if !ok {
			return fmt.Errorf("value %s: want a whole number", table.FormatValue(val))
		}
		dst.SetInt(n)
	case reflect.String:
		s, ok := val.(string)
		if !ok {
			return fmt.Errorf("value %s: want a string", table.FormatValue(val))
		}
		dst.SetString(s)
	case reflect.Bool:
		b, ok := val.(bool)
		if !ok {
			return fmt.Errorf("value %s: want true or false", table.FormatValue(val))
		}
		dst.SetBool(b)
	case reflect.Slice:
		a, ok := val.([]any)
		if !ok {
			return fmt.Errorf("value %s: want an array", table.FormatValue(val))
		}
		s := reflect.MakeSlice(dst.Type(), len(a), len(a))
		for i, e := range a {
			if err := assignValue(s.Index(i), e); err != nil {
				return err
			}
		}
		dst.Set(s)
	default:
		return fmt.Errorf("value %s: this key cannot be set by a grid", table.FormatValue(val))
	}
	return nil
}

// sameConfig reports whether two configuration texts decode to the same
// configuration, old spellings (config.Renames) read as the new: a point's
// fit.toml written before a rename is what the grid makes now.
func sameConfig(a, b []byte) bool {
	ca, err := config.Decode(string(a), "", "")
	if err != nil {
		return false
	}
	cb, err := config.Decode(string(b), "", "")
	if err != nil {
		return false
	}
	ca.Renamed, cb.Renamed = nil, nil
	return reflect.DeepEqual(ca, cb)
}

// hash is the grid's identity: the SHA-256 of id encoded as TOML. The
// encoding hashed is written in the spellings from before the renames
// of config.Renames ([[axis]], old key paths), so that a grid expanded
// before them keeps its identity and its points' seeds.
func (id *gridIdentity) hash() (string, error) {
	var b bytes.Buffer
	if err := toml.NewEncoder(&b).Encode(id); err != nil {
		return "", err
	}
	lines := strings.Split(b.String(), "\n")
	for i, line := range lines {
		t := strings.TrimSpace(line)
		indent := line[:len(line)-len(strings.TrimLeft(line, " \t"))]
		switch {
		case t == "[[axes]]":
			lines[i] = indent + "[[axis]]"
		case strings.HasPrefix(t, "key = "):
			if k, err := strconv.Unquote(strings.TrimPrefix(t, "key = ")); err == nil {
				lines[i] = indent + "key = " + strconv.Quote(config.OldKey(k))
			}
		}
	}
	return hex.EncodeToString(sha256Sum([]byte(strings.Join(lines, "\n")))), nil
}

// pointSeed is the sampler seed of point i when the base, [set] and the
// axes give none.
func (id *gridIdentity) pointSeed(identity string, i int) int64 {
	if id.Seed != nil {
		return *id.Seed + int64(i)
	}
	h := sha256.Sum256([]byte(identity + "/" + strconv.Itoa(i)))
	return int64(binary.BigEndian.Uint64(h[:8]) >> 1)
}

// builtPoint is a point's files, made in memory before anything is
// written.
type builtPoint struct {
	fit   []byte           // fit.toml
	obs   *obs.Observation // nil for retrieval bases
	noise float64          // noise level, ppm (NaN when unknown)
	seed  int64
}

// GridOptions configures CreateGrid.
type GridOptions struct {
	DemoCache string    // demo opacity cache; "" means config.DemoCacheDir
	Log       io.Writer // notes; nil discards
}

// CreateGrid expands the grid file specPath into dir, or checks that dir
// already holds this very grid (then nothing changes). Every point is
// built and checked before the first file is written; a directory holding
// another grid, or not empty and holding none, is refused.
func CreateGrid(specPath, dir string, opt GridOptions) (*Grid, error) {
	log := logto.First(opt.Log)
	spec, err := LoadGridSpec(specPath)
	if err != nil {
		return nil, err
	}
	id, _, baseText, err := resolveGrid(specPath, spec)
	if err != nil {
		return nil, err
	}
	for _, w := range spec.Renamed {
		fmt.Fprintf(log, "chord: warning: %s: %s\n", specPath, w)
	}
	if err := spec.Slurm.check(); err != nil {
		return nil, fmt.Errorf("grid %s: %w", specPath, err)
	}
	identity, err := id.hash()
	if err != nil {
		return nil, err
	}
	if dir, err = filepath.Abs(dir); err != nil {
		return nil, err
	}
	src, _ := filepath.Abs(specPath)
	g := &Grid{Dir: dir, rec: gridRecord{Identity: identity, Version: version.Version, Source: src, gridIdentity: *id, Slurm: spec.Slurm}}
	recPath := filepath.Join(dir, GridFileName)
	exists := false
	if _, err := os.Stat(recPath); err == nil {
		old, err := OpenGrid(dir)
		if err != nil {
			return nil, err
		}
		if old.rec.Identity != identity {
			return nil, fmt.Errorf("grid: %s holds a different grid (identity %s, this grid file %s gives %s: its base, observing settings, [set] or axes differ); nothing was changed: choose another directory", dir, filehash.Short(old.rec.Identity), specPath, filehash.Short(identity))
		}
		exists = true
	} else if ents, err := os.ReadDir(dir); err == nil && len(ents) > 0 {
		return nil, fmt.Errorf("grid: directory %s is not empty and holds no grid (%s): choose another", dir, GridFileName)
	}
	g.Points = expandAxes(id.Axes)
	built, err := g.build(opt.DemoCache, log)
	if err != nil {
		return nil, err
	}
	// Existing files must be what this grid makes (a program change could
	// make a point's observation differ); check all before writing any.
	for i, b := range built {
		if old, err := os.ReadFile(filepath.Join(g.PointDir(i), "fit.toml")); err == nil && !bytes.Equal(old, b.fit) && !sameConfig(old, b.fit) {
			return nil, fmt.Errorf("grid: %s differs from the configuration this grid makes now (was it edited, or did the program change?); nothing was changed", filepath.Join(g.PointDir(i), "fit.toml"))
		}
	}
	if err := os.MkdirAll(filepath.Join(dir, "points"), 0o755); err != nil {
		return nil, err
	}
	// The record first: an expansion cut short is completed by running
	// it again.
	if !exists {
		var b bytes.Buffer
		fmt.Fprintf(&b, "# Grid expanded by chord %s from %s; %d points. Do not edit: the identity\n# is the SHA-256 of the resolved grid, and chord grid refuses a different grid here.\n", version.Version, src, len(g.Points))
		if err := toml.NewEncoder(&b).Encode(&g.rec); err != nil {
			return nil, err
		}
		if err := atomicfile.Write(recPath, b.Bytes(), false); err != nil {
			return nil, err
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "base.toml")); errors.Is(err, os.ErrNotExist) {
		if err := atomicfile.Write(filepath.Join(dir, "base.toml"), baseText, false); err != nil {
			return nil, err
		}
	}
	for i, b := range built {
		pd := g.PointDir(i)
		if err := os.MkdirAll(pd, 0o755); err != nil {
			return nil, err
		}
		if b.obs != nil {
			if err := keepOrWriteObservation(filepath.Join(pd, "observation.csv"), b.obs); err != nil {
				return nil, fmt.Errorf("grid: point %d: %w", i, err)
			}
		}
		if _, err := os.Stat(filepath.Join(pd, "fit.toml")); errors.Is(err, os.ErrNotExist) {
			if err := atomicfile.Write(filepath.Join(pd, "fit.toml"), b.fit, false); err != nil {
				return nil, err
			}
		}
	}
	if err := g.writeIndex(built); err != nil {
		return nil, err
	}
	return g, nil
}

// OpenGrid opens the grid in dir.
func OpenGrid(dir string) (*Grid, error) {
	dir, err := filepath.Abs(dir)
	if err != nil {
		return nil, err
	}
	path := filepath.Join(dir, GridFileName)
	if _, err := os.Stat(path); err != nil {
		return nil, fmt.Errorf("grid: %s %w (%s)", dir, ErrNoGrid, GridFileName)
	}
	g := &Grid{Dir: dir}
	if _, err := config.DecodeStrict(path, &g.rec); err != nil {
		return nil, err
	}
	if h, err := g.rec.gridIdentity.hash(); err != nil || h != g.rec.Identity {
		return nil, fmt.Errorf("grid: %s was edited (its identity does not match its contents): restore it", path)
	}
	n := 1
	for _, a := range g.rec.Axes {
		if n *= len(a.Values); len(a.Values) == 0 || n > MaxGridPoints {
			return nil, fmt.Errorf("%s: axis %s: empty or too long", path, a.Key)
		}
		if strings.HasPrefix(a.Key, "observe.") {
			if err := checkObserveAxis(a); err != nil {
				return nil, fmt.Errorf("%s: axis %s: %w", path, a.Key, err)
			}
		}
	}
	g.Points = expandAxes(g.rec.Axes)
	return g, nil
}

// pointConfig is the base configuration with [set] and point i's values
// applied, and the observing settings of a scenario point.
func (g *Grid) pointConfig(i int, baseText []byte) (*config.Config, simulate.ObservingSpec, simulate.Options, error) {
	id := &g.rec.gridIdentity
	c, err := config.Decode(string(baseText), id.Base, filepath.Dir(id.Base))
	if err != nil {
		return nil, simulate.ObservingSpec{}, simulate.Options{}, err
	}
	for _, st := range id.Set {
		if err := setConfigKey(c, st.Key, st.Value); err != nil {
			return nil, simulate.ObservingSpec{}, simulate.Options{}, err
		}
	}
	for k, a := range id.Axes {
		if !strings.HasPrefix(a.Key, "observe.") {
			if err := setConfigKey(c, a.Key, g.Points[i].Values[k]); err != nil {
				return nil, simulate.ObservingSpec{}, simulate.Options{}, err
			}
		}
	}
	ospec, sim := observePoint(id.Observe, id.Axes, g.Points[i])
	return c, ospec, sim, nil
}

// observePoint is how a point is observed: [observe] with the point's
// observation-axis values; the noise seed is noise_seed plus the point's
// index unless an axis gives it.
func observePoint(o GridObserve, axes []GridAxis, p GridPoint) (simulate.ObservingSpec, simulate.Options) {
	noiseSeed := int64(p.Index)
	if o.NoiseSeed != nil {
		noiseSeed += *o.NoiseSeed
	}
	for k, a := range axes {
		v := p.Values[k]
		switch a.Key {
		case AxisNoisePPM:
			f, _ := table.ToFloat(v)
			o.NoisePPM = &f
		case AxisTransits:
			n := v.(int64)
			o.Transits = &n
		case AxisNoiseSeed:
			noiseSeed = v.(int64)
		}
	}
	ospec := simulate.ObservingSpec{BinsFile: o.BinsFile, NoiseFile: o.NoiseFile}
	if len(o.WavelengthRangeUm) == 2 {
		ospec.RangeUm = [2]float64{o.WavelengthRangeUm[0], o.WavelengthRangeUm[1]}
	}
	if o.ResolvingPower != nil {
		ospec.ResolvingPower = *o.ResolvingPower
	}
	if o.NoisePPM != nil {
		ospec.NoisePPM = *o.NoisePPM
	}
	if o.Transits != nil {
		ospec.Transits = int(*o.Transits)
	}
	return ospec, simulate.Options{Scatter: o.Scatter, Seed: uint64(noiseSeed)}
}

// simulatePoint observes the scenario as ospec and sim say and returns the
// observation and the configuration that fits it from obsPath.
func simulatePoint(sc *simulate.Scenario, set *opacity.Set, ospec simulate.ObservingSpec, sim simulate.Options, obsPath string) (*obs.Observation, *config.Config, error) {
	bins, noise, err := ospec.Resolve(sc)
	if err != nil {
		return nil, nil, err
	}
	sim.Noise = noise
	o, err := sc.Simulate(set, bins, sim)
	if err != nil {
		return nil, nil, err
	}
	c, err := sc.FitConfig(obsPath)
	if err != nil {
		return nil, nil, err
	}
	return o, c, nil
}

// opacityKey identifies the tables a configuration loads.
func opacityKey(c *config.Config) string {
	var b bytes.Buffer
	oc := c.Opacity
	if oc.Dir != "" {
		oc.Dir = c.Abs(oc.Dir)
	}
	toml.NewEncoder(&b).Encode(oc)
	return b.String()
}

// build makes every point's files in memory, loading each distinct set of
// opacity tables once.
func (g *Grid) build(demoCache string, log io.Writer) ([]builtPoint, error) {
	id := &g.rec.gridIdentity
	baseText, err := os.ReadFile(id.Base)
	if err != nil {
		return nil, fmt.Errorf("grid: base: %w", err)
	}
	if hex.EncodeToString(sha256Sum(baseText)) != id.BaseSHA256 {
		return nil, fmt.Errorf("grid: the base %s changed since the grid was expanded (SHA-256 differs from %s)", id.Base, GridFileName)
	}
	sets := map[string]*opacity.Set{}
	out := make([]builtPoint, len(g.Points))
	for i := range g.Points {
		at := fmt.Sprintf("grid: point %d (%s)", i, g.Settings(i))
		c, ospec, sim, err := g.pointConfig(i, baseText)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", at, err)
		}
		if c.Sampler.Seed == nil {
			s := id.pointSeed(g.rec.Identity, i)
			c.Sampler.Seed = &s
		}
		b := &out[i]
		b.seed, b.noise = *c.Sampler.Seed, math.NaN()
		if err := c.ModelConfig.Validate(); err != nil {
			return nil, fmt.Errorf("%s: %w", at, err)
		}
		pd := g.PointDir(i)
		if id.Kind == "scenario" {
			sc := &simulate.Scenario{Path: id.Base, Config: *c}
			if _, _, err := ospec.Resolve(sc); err != nil {
				return nil, fmt.Errorf("%s: %w", at, err)
			}
			k := opacityKey(c)
			set := sets[k]
			if set == nil {
				if set, err = c.ModelConfig.LoadOpacity(demoCache, log); err != nil {
					return nil, fmt.Errorf("%s: %w", at, err)
				}
				if set.Demo {
					fmt.Fprintln(log, "chord: "+report.DemoWarning)
				}
				sets[k] = set
			}
			if b.obs, c, err = simulatePoint(sc, set, ospec, sim, filepath.Join(pd, "observation.csv")); err != nil {
				return nil, fmt.Errorf("%s: %w", at, err)
			}
			if err := checkFit(c, b.obs); err != nil {
				return nil, fmt.Errorf("%s: %w", at, err)
			}
			b.noise = obs.NoisePPM(b.obs.Sigma)
		} else {
			for j := range c.Observations {
				c.Observations[j].File = c.Abs(c.Observations[j].File)
			}
			if c.Opacity.Dir != "" {
				c.Opacity.Dir = c.Abs(c.Opacity.Dir)
			}
			r, err := c.Resolve()
			if err != nil {
				return nil, fmt.Errorf("%s: %w", at, err)
			}
			var sigma []float64
			for _, d := range r.Datasets {
				sigma = append(sigma, d.Sigma...)
			}
			if len(sigma) > 0 {
				b.noise = obs.NoisePPM(sigma)
			}
		}
		var t bytes.Buffer
		fmt.Fprintf(&t, "# Retrieval configuration of grid point %d (%s).\n# Written by chord grid; the grid's identity is %s.\n", i, g.Settings(i), filehash.Short(g.rec.Identity))
		if err := toml.NewEncoder(&t).Encode(c); err != nil {
			return nil, err
		}
		b.fit = t.Bytes()
	}
	return out, nil
}

// checkFit resolves the fit configuration of a scenario point against
// its observation (written to a temporary file), so that what the fit
// would refuse (walkers, priors, parameters) is refused at expansion.
func checkFit(c *config.Config, o *obs.Observation) error {
	tmp, err := os.MkdirTemp("", "chord-grid-check-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(tmp)
	p := filepath.Join(tmp, "observation.csv")
	if err := obs.WriteObservation(p, o, false); err != nil {
		return err
	}
	cc := *c
	cc.Observations = []config.ObservationConfig{{File: p}}
	_, err = cc.Resolve()
	return err
}

// axisCols are the columns of the axes, named by their keys.
func (g *Grid) axisCols() []table.Column {
	cols := make([]table.Column, len(g.rec.Axes))
	for k, a := range g.rec.Axes {
		kind := axisKind(a.Values)
		if kind == 'a' {
			kind = 's'
		}
		cols[k] = table.Column{Name: a.Key, Kind: kind}
	}
	return cols
}

func (g *Grid) writeIndex(built []builtPoint) error {
	cols := append([]table.Column{{Name: "point", Kind: 'i'}, {Name: "dir", Kind: 's'}}, g.axisCols()...)
	cols = append(cols, table.Column{Name: "sampler_seed", Kind: 'i'}, table.Column{Name: "noise_ppm", Kind: 'f'})
	rows := make([][]any, len(g.Points))
	for i, p := range g.Points {
		r := []any{int64(i), filepath.Join("points", p.Name)}
		r = append(r, p.Values...)
		rows[i] = append(r, built[i].seed, built[i].noise)
	}
	return table.Write(g.Dir, "index", cols, rows, map[string]string{"chord.grid_identity": g.rec.Identity})
}

// PointState is how far a point has come.
type PointState int

// The states of a point.
const (
	PointNotStarted PointState = iota // no checkpoint
	PointRunning                      // a chord process holds the point's lock
	PointStopped                      // a checkpoint, no summary: resumable
	PointDone                         // summary.json written
	PointFailed                       // the last attempt ended in an error (error.txt)
	PointQueued                       // a submitted array task for it is pending or starting
)

func (s PointState) String() string {
	return [...]string{"not started", "running", "stopped", "done", "failed", "queued"}[s]
}

// pointErrorFile holds the error that ended a point's last attempt.
const pointErrorFile = "error.txt"

// PointStatus is the state of one point. A failed point with a
// checkpoint shows as stopped, with the error.
type PointStatus struct {
	Index int
	State PointState
	// Step is the step of the latest checkpoint (running or stopped) or of
	// the chain (done); Steps the run's step target (0 for other rules).
	Step, Steps int
	// Holder says which process runs the point (host, pid, Slurm job).
	Holder string
	// Error is the error of a failed point's last attempt.
	Error string
}

// String describes the status, e.g. "stopped with checkpoint at step 120
// of 400".
func (p PointStatus) String() string {
	of := ""
	if p.Steps > 0 {
		of = fmt.Sprintf(" of %d", p.Steps)
	}
	switch p.State {
	case PointRunning:
		return fmt.Sprintf("running (%s; checkpoint at step %d%s)", p.Holder, p.Step, of)
	case PointStopped:
		if p.Error != "" {
			return fmt.Sprintf("stopped with checkpoint at step %d%s, after an error: %s", p.Step, of, p.Error)
		}
		return fmt.Sprintf("stopped with checkpoint at step %d%s", p.Step, of)
	case PointDone:
		return fmt.Sprintf("done (%d steps)", p.Step)
	case PointFailed:
		return "failed: " + p.Error
	case PointQueued:
		return "queued (" + p.Holder + ")"
	}
	return "not started"
}

// Status reports every point's state. Points of submitted array tasks
// that Slurm still has pending are "queued" (when squeue answers).
func (g *Grid) Status() ([]PointStatus, error) {
	queued := g.queuedPoints()
	st := make([]PointStatus, len(g.Points))
	for i := range g.Points {
		s := &st[i]
		s.Index = i
		run := g.RunDir(i)
		if ck, err := retrieve.ReadCheckpoint(filepath.Join(run, retrieve.CheckpointFile)); err == nil {
			s.State, s.Step, s.Steps = PointStopped, ck.Step, ck.Stop.Steps
		} else if _, serr := os.Stat(filepath.Join(run, retrieve.CheckpointFile)); serr == nil {
			return nil, fmt.Errorf("grid: point %d: %w", i, err)
		}
		if holder, running := runlock.Probe(g.PointDir(i)); running {
			s.State, s.Holder = PointRunning, holder
			continue
		}
		if _, err := os.Stat(filepath.Join(run, "summary.json")); err == nil {
			sum, err := report.ReadSummary(run)
			if err != nil {
				return nil, err
			}
			s.State, s.Step = PointDone, sum.Steps
		} else if b, err := os.ReadFile(filepath.Join(g.PointDir(i), pointErrorFile)); err == nil {
			s.Error = strings.TrimSpace(string(b))
			if s.State != PointStopped {
				s.State = PointFailed
			}
		}
		if q, ok := queued[i]; ok && s.State != PointDone {
			s.State, s.Holder = PointQueued, q
		}
	}
	return st, nil
}

// PointOptions configures the fit of a point.
type PointOptions struct {
	Workers   *int // overrides sampler.workers
	DemoCache string
	Progress  retrieve.Progress
	Log       io.Writer
	// Opacity, when not nil, are the point's tables already loaded.
	Opacity *opacity.Set
	// Holder describes this process in the point's lock (status shows it).
	Holder string
}

// RunPoint fits point i, or resumes it from its checkpoint, or, when it is
// done, returns its summary. The point's lock keeps two processes from
// running the same point.
func (g *Grid) RunPoint(ctx context.Context, i int, opt PointOptions) (*retrieve.RunReport, error) {
	if i < 0 || i >= len(g.Points) {
		return nil, fmt.Errorf("grid: point %d: the grid in %s has points 0 to %d", i, g.Dir, len(g.Points)-1)
	}
	lock, err := runlock.Acquire(g.PointDir(i), opt.Holder)
	if err != nil {
		return nil, fmt.Errorf("grid: point %d: %w", i, err)
	}
	defer lock.Release()
	log := logto.First(opt.Log)
	ef := filepath.Join(g.PointDir(i), pointErrorFile)
	if err := os.Remove(ef); err != nil && !errors.Is(err, os.ErrNotExist) {
		return nil, err
	}
	fit := filepath.Join(g.PointDir(i), "fit.toml")
	var truth *config.ModelConfig
	if g.rec.Kind == "scenario" {
		// The point observed its scenario, whose model sections the fit
		// configuration keeps: they are the truth of its report.
		var c config.Config
		if _, err := config.DecodeStrict(fit, &c); err != nil {
			return nil, err
		}
		truth = &c.ModelConfig
	}
	r, err := fitOrResume(ctx, "chord grid", fit, g.RunDir(i), opt.Opacity, config.StopRule{}, opt.Workers, opt.DemoCache, opt.Progress, log, truth)
	if err != nil && !interrupted(ctx, err) {
		// Kept for chord grid status; the next attempt removes it.
		atomicfile.Write(ef, []byte(strings.ReplaceAll(err.Error(), "\n", " ")+"\n"), true)
	}
	return r, err
}

// interrupted reports whether err is ctx's cancellation: a point stopped
// by a signal before anything was written, which is not a failure.
func interrupted(ctx context.Context, err error) bool {
	return ctx.Err() != nil && errors.Is(err, ctx.Err())
}

// fitOrResume starts, resumes or keeps the fit of cfg in run (who names
// the command in log lines; truth, when known, is the simulated truth): a
// run with
// a summary is kept, one with a checkpoint resumed, any other started
// afresh (replacing what a run killed before its first checkpoint left).
func fitOrResume(ctx context.Context, who, cfg, run string, set *opacity.Set, stop config.StopRule, workers *int, cache string, prog retrieve.Progress, log io.Writer, truth *config.ModelConfig) (*retrieve.RunReport, error) {
	if _, err := os.Stat(filepath.Join(run, "summary.json")); err == nil {
		s, err := report.ReadSummary(run)
		if err != nil {
			return nil, err
		}
		fmt.Fprintf(log, "%s: %s is done; kept\n", who, run)
		return &retrieve.RunReport{Dir: run, Summary: s}, nil
	}
	if _, err := os.Stat(filepath.Join(run, retrieve.CheckpointFile)); err == nil {
		fmt.Fprintf(log, "%s: resuming %s\n", who, run)
		return retrieve.Resume(ctx, run, retrieve.ResumeOptions{Stop: stop, Workers: workers, Opacity: set, DemoCache: cache, Progress: prog, Log: log})
	}
	fmt.Fprintf(log, "%s: fitting %s\n", who, run)
	return retrieve.Fit(ctx, retrieve.FitOptions{ConfigPath: cfg, RunDir: run, Force: true, Workers: workers, Stop: stop, Opacity: set, DemoCache: cache, Progress: prog, Log: log, Truth: truth})
}

// LocalOptions configures RunLocal.
type LocalOptions struct {
	Jobs int // points at once; 0 means 1
	// Workers per fit; nil means the cores divided among the jobs (the
	// configurations' sampler.workers are overridden; chains do not
	// depend on it).
	Workers   *int
	DemoCache string
	Log       io.Writer // one line per point started and finished; nil discards
	// Points to run; nil means every point not done.
	Points []int
	// OnPoint, when set, is told after each point that ends (done,
	// stopped or failed) how many of the grid's points are done and how
	// many it has; it is called once before the first point, and from one
	// goroutine at a time.
	OnPoint func(done, total int)
}

// LocalReport is what RunLocal returns.
type LocalReport struct {
	Done, Stopped, Failed []int
	Errors                []error // one per failed point
}

// RunLocal runs the grid's unfinished points on this machine, opt.Jobs at
// a time, each point's progress going to its log.txt. Points with the same
// opacity tables share one load. A cancelled context stops every running
// fit at a checkpoint.
func (g *Grid) RunLocal(ctx context.Context, opt LocalOptions) (*LocalReport, error) {
	log := logto.First(opt.Log)
	jobs := max(opt.Jobs, 1)
	workers := opt.Workers
	if workers == nil {
		w := max(runtime.GOMAXPROCS(0)/jobs, 1)
		workers = &w
	}
	pts := opt.Points
	if pts == nil {
		st, err := g.Status()
		if err != nil {
			return nil, err
		}
		for _, s := range st {
			switch s.State {
			case PointRunning, PointQueued:
				fmt.Fprintf(log, "chord grid: point %d is %s: left alone\n", s.Index, s)
			case PointDone:
			default:
				pts = append(pts, s.Index)
			}
		}
	}
	// Load the tables once per distinct opacity section.
	sets := map[string]*opacity.Set{}
	pset := make([]*opacity.Set, len(g.Points))
	for _, i := range pts {
		r, err := config.Load(filepath.Join(g.PointDir(i), "fit.toml"))
		if err != nil {
			return nil, err
		}
		k := opacityKey(&r.Config)
		if sets[k] == nil {
			if sets[k], err = r.Config.LoadOpacity(opt.DemoCache, log); err != nil {
				return nil, err
			}
		}
		pset[i] = sets[k]
	}
	rep := &LocalReport{}
	doneBefore := len(g.Points) - len(pts)
	if opt.Points != nil {
		st, err := g.Status()
		if err != nil {
			return nil, err
		}
		doneBefore = 0
		for _, s := range st {
			if s.State == PointDone {
				doneBefore++
			}
		}
	}
	progress := func() {
		if opt.OnPoint != nil {
			opt.OnPoint(doneBefore+len(rep.Done), len(g.Points))
		}
	}
	progress()
	var mu sync.Mutex
	sem := make(chan struct{}, jobs)
	var wg sync.WaitGroup
	// After a cancellation no point starts: the running ones stop at a
	// checkpoint, the others stay as they are.
start:
	for _, i := range pts {
		select {
		case <-ctx.Done():
			break start
		case sem <- struct{}{}:
		}
		if ctx.Err() != nil {
			<-sem
			break
		}
		wg.Add(1)
		go func() {
			defer func() { <-sem; wg.Done() }()
			lf, err := os.OpenFile(filepath.Join(g.PointDir(i), "log.txt"), os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o644)
			var r *retrieve.RunReport
			if err == nil {
				mu.Lock()
				fmt.Fprintf(log, "chord grid: point %d (%s): started\n", i, g.Settings(i))
				mu.Unlock()
				r, err = g.RunPoint(ctx, i, PointOptions{Workers: workers, Opacity: pset[i], DemoCache: opt.DemoCache,
					Progress: retrieve.Progress{Writer: lf}, Log: lf, Holder: runlock.Holder("chord grid --local")})
				lf.Close()
			}
			mu.Lock()
			defer mu.Unlock()
			switch {
			case err != nil && interrupted(ctx, err):
				rep.Stopped = append(rep.Stopped, i)
				fmt.Fprintf(log, "chord grid: point %d: stopped before its run started\n", i)
			case err != nil:
				rep.Failed, rep.Errors = append(rep.Failed, i), append(rep.Errors, err)
				fmt.Fprintf(log, "chord grid: point %d: failed: %v\n", i, err)
			case r.Outcome != nil && r.Outcome.BeforeStart:
				rep.Stopped = append(rep.Stopped, i)
				fmt.Fprintf(log, "chord grid: point %d: stopped before its first checkpoint\n", i)
			case r.Summary == nil || (r.Outcome != nil && r.Outcome.Stop == sampler.StopCanceled):
				rep.Stopped = append(rep.Stopped, i)
				fmt.Fprintf(log, "chord grid: point %d: stopped at step %d (checkpoint written)\n", i, r.Outcome.Step)
			default:
				rep.Done = append(rep.Done, i)
				fmt.Fprintf(log, "chord grid: point %d: done\n", i)
			}
			progress()
		}()
	}
	wg.Wait()
	sort.Ints(rep.Done)
	sort.Ints(rep.Stopped)
	return rep, nil
}
