package library

import (
	"os"

	"github.com/loopwright/loopwright/model"
)

// Load reads a MODEL argument: a template reference ("lib:NAME", see
// IsTemplateRef) or the path of a model file. Messages about a template
// name "lib:NAME" (embedded) or the user's file path as the file, so that
// every position in them points at something the user can open.
func (l *Library) Load(arg string) (*model.File, error) {
	if name, ok := IsTemplateRef(arg); ok {
		rc, display, err := l.Open(name)
		if err != nil {
			return nil, err
		}
		defer rc.Close()
		return model.Load(display, rc)
	}
	f, err := os.Open(arg)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return model.Load(arg, f)
}
