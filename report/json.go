package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"sort"
	"strings"
)

// JSON encodes v like encoding/json (struct field order, json tags,
// omitempty, embedded structs inlined) with three differences that suit
// statistics: a float that is NaN or infinite (a quantity that cannot be
// computed, such as the interval of one value) is written as null, a nil
// slice is written as [] so that scripts can always iterate, and a field
// tagged "nullempty" is written as null when it holds its zero value (an
// empty string, 0, false, an empty slice or map), so that a documented key
// is always present. A key that two fields (one of an embedded struct)
// would both write is an error, not a silent choice.
func JSON(v any) ([]byte, error) {
	var buf bytes.Buffer
	if err := encodeValue(&buf, reflect.ValueOf(v)); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

var marshalerType = reflect.TypeFor[json.Marshaler]()

func encodeValue(buf *bytes.Buffer, v reflect.Value) error {
	if !v.IsValid() {
		buf.WriteString("null")
		return nil
	}
	if v.Type().Implements(marshalerType) && (v.Kind() != reflect.Pointer || !v.IsNil()) {
		b, err := json.Marshal(v.Interface())
		if err != nil {
			return err
		}
		buf.Write(b)
		return nil
	}
	switch v.Kind() {
	case reflect.Interface, reflect.Pointer:
		if v.IsNil() {
			buf.WriteString("null")
			return nil
		}
		return encodeValue(buf, v.Elem())
	case reflect.Float32, reflect.Float64:
		f := v.Float()
		if math.IsNaN(f) || math.IsInf(f, 0) {
			buf.WriteString("null")
			return nil
		}
		b, _ := json.Marshal(f)
		buf.Write(b)
		return nil
	case reflect.Slice, reflect.Array:
		buf.WriteByte('[')
		for i := 0; i < v.Len(); i++ {
			if i > 0 {
				buf.WriteByte(',')
			}
			if err := encodeValue(buf, v.Index(i)); err != nil {
				return err
			}
		}
		buf.WriteByte(']')
		return nil
	case reflect.Map:
		if v.IsNil() {
			buf.WriteString("{}")
			return nil
		}
		keys := v.MapKeys()
		names := make([]string, len(keys))
		for i, k := range keys {
			names[i] = fmt.Sprint(k.Interface())
		}
		idx := make([]int, len(keys))
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(a, b int) bool { return names[idx[a]] < names[idx[b]] })
		buf.WriteByte('{')
		for n, i := range idx {
			if n > 0 {
				buf.WriteByte(',')
			}
			kb, _ := json.Marshal(names[i])
			buf.Write(kb)
			buf.WriteByte(':')
			if err := encodeValue(buf, v.MapIndex(keys[i])); err != nil {
				return err
			}
		}
		buf.WriteByte('}')
		return nil
	case reflect.Struct:
		buf.WriteByte('{')
		first := true
		if err := encodeFields(buf, v, &first, map[string]bool{}); err != nil {
			return err
		}
		buf.WriteByte('}')
		return nil
	default:
		b, err := json.Marshal(v.Interface())
		if err != nil {
			return err
		}
		buf.Write(b)
		return nil
	}
}

func encodeFields(buf *bytes.Buffer, v reflect.Value, first *bool, seen map[string]bool) error {
	t := v.Type()
	for i := 0; i < t.NumField(); i++ {
		f := t.Field(i)
		tag := f.Tag.Get("json")
		if tag == "-" {
			continue
		}
		name, opts, _ := strings.Cut(tag, ",")
		fv := v.Field(i)
		if f.Anonymous && name == "" && f.Type.Kind() == reflect.Struct {
			if err := encodeFields(buf, fv, first, seen); err != nil {
				return err
			}
			continue
		}
		if !f.IsExported() {
			continue
		}
		if name == "" {
			name = f.Name
		}
		if hasOpt(opts, "omitempty") && fv.IsZero() {
			continue
		}
		if hasOpt(opts, "omitempty") && (fv.Kind() == reflect.Slice || fv.Kind() == reflect.Map) && fv.Len() == 0 {
			continue
		}
		null := hasOpt(opts, "nullempty") && (fv.IsZero() || (fv.Kind() == reflect.Slice || fv.Kind() == reflect.Map) && fv.Len() == 0)
		if seen[name] {
			return fmt.Errorf("report: JSON key %q twice in %s", name, t)
		}
		seen[name] = true
		if !*first {
			buf.WriteByte(',')
		}
		*first = false
		kb, _ := json.Marshal(name)
		buf.Write(kb)
		buf.WriteByte(':')
		if null {
			buf.WriteString("null")
			continue
		}
		if err := encodeValue(buf, fv); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
	}
	return nil
}

// hasOpt says whether the comma-separated tag options opts include opt.
func hasOpt(opts, opt string) bool {
	for o := range strings.SplitSeq(opts, ",") {
		if o == opt {
			return true
		}
	}
	return false
}
