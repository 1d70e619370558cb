package config

import (
	"bytes"
	"fmt"
	"sort"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"
)

// A Rename is a key, or a value of a key, renamed in this release. The old
// spelling is still accepted, with a warning naming the new one, for this
// release only (docs/configuration.md lists them all).
type Rename struct {
	// Old and New are dotted key paths from the top of the file, array
	// tables without an index ("parameters.sets"). For a value rename Key
	// is the key and Old and New are its old and new values.
	Key      string
	Old, New string
}

// Renames are every renamed key and value, the one table the decoder
// consults (decodeStrict) and grids consult for their key paths
// (RenamedKey).
var Renames = []Rename{
	{Old: "atmosphere.fill", New: "atmosphere.balance_gas"},
	{Old: "atmosphere.he_h2_ratio", New: "atmosphere.balance_he_h2_ratio"},
	{Old: "atmosphere.temperature.kappa_ir_m2_kg", New: "atmosphere.temperature.thermal_opacity_m2_kg"},
	{Old: "atmosphere.temperature.gamma", New: "atmosphere.temperature.opacity_ratio"},
	{Old: "atmosphere.temperature.pressure_bar", New: "atmosphere.temperature.pressures_bar"},
	{Old: "clouds.top_pressure_bar", New: "clouds.cloud_top_bar"},
	{Old: "clouds.fraction", New: "clouds.cloud_fraction"},
	{Old: "clouds.haze_factor", New: "clouds.haze_strength"},
	{Old: "clouds.haze_slope", New: "clouds.haze_index"},
	{Old: "clouds.haze_reference_um", New: "clouds.haze_pivot_um"},
	{Old: "axis", New: "axes"}, // grid files
	{Key: "parameters.sets", Old: "log10_kappa_ir", New: string(QLog10ThermalOpacity)},
	{Key: "parameters.sets", Old: "log10_gamma", New: string(QLog10OpacityRatio)},
	{Key: "parameters.sets", Old: "log10_haze_factor", New: string(QLog10HazeStrength)},
	{Key: "parameters.sets", Old: "haze_slope", New: string(QHazeIndex)},
	{Key: "sampler.move", Old: "de", New: MoveDiffEvolution},
}

// RenamedKey returns the new name of the key path p (a grid's [set] key or
// axis) and a warning, or p and "" when it was not renamed.
func RenamedKey(p string) (string, string) {
	for _, r := range Renames {
		if r.Key == "" && r.Old == p {
			return r.New, renameWarning(r)
		}
	}
	return p, ""
}

func renameWarning(r Rename) string {
	if r.Key != "" {
		return fmt.Sprintf("%s = %q is the old spelling of %q, accepted in this release only; write %s = %q", r.Key, r.Old, r.New, r.Key, r.New)
	}
	return fmt.Sprintf("%s is the old name of %s, accepted in this release only; rename the key", r.Old, r.New)
}

// Renamer is implemented by the files that keep the warnings of the
// renamed keys they used (ModelConfig and every struct embedding it, grid
// files).
type Renamer interface{ SetRenamed([]string) }

// SetRenamed keeps the warnings of the renamed keys (ModelConfig.Renamed).
func (c *ModelConfig) SetRenamed(w []string) { c.Renamed = w }

// applyRenames rewrites the old spellings in the decoded TOML tree m into
// the new ones and returns a warning for each; a key given in both
// spellings is an error.
func applyRenames(m map[string]any) ([]string, error) {
	var warn []string
	for _, r := range Renames {
		if r.Key != "" {
			path := strings.Split(r.Key, ".")
			n := 0
			forTables(m, path[:len(path)-1], func(t map[string]any) {
				if v, ok := t[path[len(path)-1]].(string); ok && v == r.Old {
					t[path[len(path)-1]] = r.New
					n++
				}
			})
			if n > 0 {
				warn = append(warn, renameWarning(r))
			}
			continue
		}
		oldPath, newPath := strings.Split(r.Old, "."), strings.Split(r.New, ".")
		parent := oldPath[:len(oldPath)-1]
		oldKey, newKey := oldPath[len(oldPath)-1], newPath[len(newPath)-1]
		var err error
		n := 0
		forTables(m, parent, func(t map[string]any) {
			v, ok := t[oldKey]
			if !ok || err != nil {
				return
			}
			if _, both := t[newKey]; both {
				err = keyErr(r.Old, "the old name of %s, which is given too; remove %s", r.New, r.Old)
				return
			}
			delete(t, oldKey)
			t[newKey] = v
			n++
		})
		if err != nil {
			return nil, err
		}
		if n > 0 {
			warn = append(warn, renameWarning(r))
		}
	}
	return warn, nil
}

// forTables calls f with every table at path in m (through arrays of
// tables).
func forTables(m map[string]any, path []string, f func(map[string]any)) {
	if len(path) == 0 {
		f(m)
		return
	}
	switch v := m[path[0]].(type) {
	case map[string]any:
		forTables(v, path[1:], f)
	case []map[string]any:
		for _, t := range v {
			forTables(t, path[1:], f)
		}
	}
}

// renamedText returns text with the old spellings rewritten (re-encoded
// from its tree), the warnings, and whether anything was renamed.
func renamedText(text string) (string, []string, error) {
	var m map[string]any
	if _, err := toml.Decode(text, &m); err != nil {
		return "", nil, err
	}
	warn, err := applyRenames(m)
	if err != nil || len(warn) == 0 {
		return text, nil, err
	}
	var b strings.Builder
	if err := toml.NewEncoder(&b).Encode(m); err != nil {
		return "", nil, err
	}
	sort.Strings(warn)
	return b.String(), warn, nil
}

// DigestText is the TOML text of c that the digests of runs are computed
// over: c encoded, with the names of Renames written back in their old
// spelling, so that a run made before a rename keeps its digest (and is
// reported and resumed) after it. Only the digest uses it.
func DigestText(c Config) ([]byte, error) {
	var b bytes.Buffer
	if err := toml.NewEncoder(&b).Encode(c); err != nil {
		return nil, err
	}
	keys := map[string]string{}   // new path -> old key name
	values := map[string]string{} // key path + " = " + new value -> old value
	for _, r := range Renames {
		if r.Key != "" {
			values[r.Key+" = "+strconv.Quote(r.New)] = strconv.Quote(r.Old)
			continue
		}
		keys[r.New] = r.Old[strings.LastIndex(r.Old, ".")+1:]
	}
	lines := strings.Split(b.String(), "\n")
	table := ""
	for i, line := range lines {
		t := strings.TrimSpace(line)
		if strings.HasPrefix(t, "[") {
			table = strings.Trim(t, "[]")
			continue
		}
		name, value, ok := strings.Cut(t, " = ")
		if !ok {
			continue
		}
		indent := line[:len(line)-len(strings.TrimLeft(line, " \t"))]
		path := table + "." + name
		if old, ok := values[path+" = "+value]; ok {
			value = old
		}
		if old, ok := keys[path]; ok {
			name = old
		}
		lines[i] = indent + name + " = " + value
	}
	return []byte(strings.Join(lines, "\n")), nil
}

// OldKey returns the spelling before the rename of the key path p (a
// grid's [set] key or axis), or p when it was not renamed: identities
// computed over the old spellings stay those of the files made before.
func OldKey(p string) string {
	for _, r := range Renames {
		if r.Key == "" && r.New == p {
			return r.Old
		}
	}
	return p
}
