package sweep

import (
	"encoding/json"
	"sort"
	"testing"
)

func sortRecords(r []Record) { sort.Slice(r, func(i, j int) bool { return r[i].Index < r[j].Index }) }

func jsonOf(t *testing.T, v any) string {
	t.Helper()
	b, err := json.MarshalIndent(v, "", " ")
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}
