package plan

import (
	"bufio"
	"encoding/json"
	"fmt"
	"path/filepath"

	"sluice/index/atomicdir"
)

// The files of a plan folder.
const (
	jsonFile      = "plan.json"
	chartFile     = "plan.svg"
	residualsFile = "residuals.svg"
)

// Folder describes the kind of folder a plan is, for atomicdir's checks: a plan.json with a config
// and curves, and nothing but a plan's files.
func Folder() atomicdir.Kind {
	return atomicdir.Kind{Name: "plan", Mark: jsonFile,
		IsOur: func(b []byte) bool {
			var p struct {
				Config *Config `json:"config"`
				Curves []Curve `json:"curves"`
				Steps  []Step  `json:"steps"`
			}
			return json.Unmarshal(b, &p) == nil && p.Config != nil && p.Steps != nil
		},
		Holds: func(name string) bool { return name == jsonFile || name == chartFile || name == residualsFile },
	}
}

// WriteFolder writes plan.json, plan.svg and, when residuals is set, residuals.svg into a working
// folder beside dir, and publishes it as dir only when all are written and synced. The caller
// checks first, with atomicdir.CheckOut and Folder, that dir may be replaced. It returns the names
// written.
func (p *Plan) WriteFolder(dir string, residuals bool) ([]string, error) {
	b, err := json.MarshalIndent(p, "", "  ")
	if err != nil {
		return nil, err
	}
	files := []struct {
		name string
		b    []byte
	}{{jsonFile, append(b, '\n')}, {chartFile, p.SVG()}}
	if residuals {
		files = append(files, struct {
			name string
			b    []byte
		}{residualsFile, p.ResidualSVG()})
	}
	tmp, err := atomicdir.Temp(dir)
	if err != nil {
		return nil, err
	}
	var names []string
	for _, f := range files {
		if err := atomicdir.WriteFile(filepath.Join(tmp, f.name), func(w *bufio.Writer) error { _, err := w.Write(f.b); return err }); err != nil {
			atomicdir.Discard(tmp)
			return nil, fmt.Errorf("write %s: %w", filepath.Join(dir, f.name), err)
		}
		names = append(names, f.name)
	}
	if err := atomicdir.Publish(tmp, dir); err != nil {
		atomicdir.Discard(tmp)
		return nil, err
	}
	return names, nil
}
