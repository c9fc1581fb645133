package render

import (
	"bytes"
	"encoding/json"
)

// Ordered is a JSON object whose keys keep the order they were added in
// (declaration order: x[1], x[2], ..., x[10]) rather than Go's sorted map
// order. Keys must be unique.
type Ordered[V any] struct {
	keys []string
	vals map[string]V
}

// Set adds or replaces key.
func (o *Ordered[V]) Set(key string, v V) {
	if o.vals == nil {
		o.vals = map[string]V{}
	}
	if _, ok := o.vals[key]; !ok {
		o.keys = append(o.keys, key)
	}
	o.vals[key] = v
}

// Get returns the value of key.
func (o *Ordered[V]) Get(key string) (V, bool) {
	v, ok := o.vals[key]
	return v, ok
}

// Keys returns the keys in order.
func (o *Ordered[V]) Keys() []string { return o.keys }

// MarshalJSON writes the object with its keys in order.
func (o Ordered[V]) MarshalJSON() ([]byte, error) {
	var b bytes.Buffer
	b.WriteByte('{')
	for i, k := range o.keys {
		if i > 0 {
			b.WriteByte(',')
		}
		kb, err := json.Marshal(k)
		if err != nil {
			return nil, err
		}
		b.Write(kb)
		b.WriteByte(':')
		vb, err := json.Marshal(o.vals[k])
		if err != nil {
			return nil, err
		}
		b.Write(vb)
	}
	b.WriteByte('}')
	return b.Bytes(), nil
}
