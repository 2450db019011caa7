package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"slices"
	"sort"
	"strconv"
	"strings"
	"sync"
	"time"
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

var (
	marshalerType = reflect.TypeFor[json.Marshaler]()
	timeType      = reflect.TypeFor[time.Time]()
)

func encodeValue(buf *bytes.Buffer, v reflect.Value) error {
	if !v.IsValid() {
		buf.WriteString("null")
		return nil
	}
	if v.Type() == timeType {
		if t := v.Interface().(time.Time); t.Year() >= 0 && t.Year() <= 9999 {
			buf.WriteByte('"')
			buf.Write(t.AppendFormat(buf.AvailableBuffer(), time.RFC3339Nano))
			buf.WriteByte('"')
			return nil
		}
	}
	if v.Kind() == reflect.String && plainString(v.String()) {
		buf.WriteByte('"')
		buf.WriteString(v.String())
		buf.WriteByte('"')
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
		buf.Write(appendFloat(buf.AvailableBuffer(), f))
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
		return encodeStruct(buf, v)
	default:
		b, err := json.Marshal(v.Interface())
		if err != nil {
			return err
		}
		buf.Write(b)
		return nil
	}
}

// jsonField is a field that a struct's JSON object holds, found through
// embedded structs by its index path.
type jsonField struct {
	index                []int
	key                  string // the quoted name and the colon
	omitEmpty, nullEmpty bool
}

// jsonFields are the fields of a struct type in the order they are
// written, or the error that its keys clash.
type jsonFields struct {
	fields []jsonField
	err    error
}

// fieldCache holds the jsonFields of each struct type met (reflect.Type
// to *jsonFields): the tags are read once per type, not once per value.
var fieldCache sync.Map

// fieldsOf returns the fields of struct type t: tagged names (the field's
// name without a tag), "-" left out, unexported fields left out, untagged
// embedded structs inlined. A key that two fields would both write is an
// error, not a silent choice.
func fieldsOf(t reflect.Type) *jsonFields {
	if f, ok := fieldCache.Load(t); ok {
		return f.(*jsonFields)
	}
	out := &jsonFields{}
	seen := map[string]bool{}
	var walk func(st reflect.Type, index []int)
	walk = func(st reflect.Type, index []int) {
		for i := 0; i < st.NumField(); i++ {
			f := st.Field(i)
			tag := f.Tag.Get("json")
			if tag == "-" {
				continue
			}
			name, opts, _ := strings.Cut(tag, ",")
			idx := append(slices.Clone(index), i)
			if f.Anonymous && name == "" && f.Type.Kind() == reflect.Struct {
				walk(f.Type, idx)
				continue
			}
			if !f.IsExported() {
				continue
			}
			if name == "" {
				name = f.Name
			}
			if seen[name] && out.err == nil {
				out.err = fmt.Errorf("report: JSON key %q twice in %s", name, t)
			}
			seen[name] = true
			out.fields = append(out.fields, jsonField{index: idx, key: keyText(name),
				omitEmpty: hasOpt(opts, "omitempty"), nullEmpty: hasOpt(opts, "nullempty")})
		}
	}
	walk(t, nil)
	f, _ := fieldCache.LoadOrStore(t, out)
	return f.(*jsonFields)
}

// encodeStruct writes a struct as a JSON object (see JSON).
func encodeStruct(buf *bytes.Buffer, v reflect.Value) error {
	fs := fieldsOf(v.Type())
	if fs.err != nil {
		return fs.err
	}
	buf.WriteByte('{')
	first := true
	for _, f := range fs.fields {
		fv := v.FieldByIndex(f.index)
		empty := fv.IsZero() || (fv.Kind() == reflect.Slice || fv.Kind() == reflect.Map) && fv.Len() == 0
		if f.omitEmpty && empty {
			continue
		}
		if !first {
			buf.WriteByte(',')
		}
		first = false
		buf.WriteString(f.key)
		if f.nullEmpty && empty {
			buf.WriteString("null")
			continue
		}
		if err := encodeValue(buf, fv); err != nil {
			return fmt.Errorf("%s: %w", f.key[:len(f.key)-1], err)
		}
	}
	buf.WriteByte('}')
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

// appendFloat appends f as encoding/json writes a finite float64: the
// shortest decimal that reads back the same, in exponent form below 1e-6
// and from 1e21 on, with a one-digit negative exponent written e-7, not
// e-07.
func appendFloat(b []byte, f float64) []byte {
	format := byte('f')
	if a := math.Abs(f); a != 0 && (a < 1e-6 || a >= 1e21) {
		format = 'e'
	}
	b = strconv.AppendFloat(b, f, format, -1, 64)
	if n := len(b); format == 'e' && n >= 4 && b[n-4] == 'e' && b[n-3] == '-' && b[n-2] == '0' {
		b[n-2] = b[n-1]
		b = b[:n-1]
	}
	return b
}

// plainString says whether encoding/json writes s between quotes as it
// is: printable ASCII without a quote, a backslash or the characters it
// escapes for HTML (<, >, &).
func plainString(s string) bool {
	for i := 0; i < len(s); i++ {
		switch c := s[i]; {
		case c < 0x20 || c > 0x7e, c == '"', c == '\\', c == '<', c == '>', c == '&':
			return false
		}
	}
	return true
}

// keyText returns "name": as JSON writes an object's key.
func keyText(name string) string {
	if plainString(name) {
		return `"` + name + `":`
	}
	kb, _ := json.Marshal(name)
	return string(kb) + ":"
}
