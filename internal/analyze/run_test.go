package analyze

import (
	"context"
	"fmt"
	"reflect"
	"sort"
	"strconv"
	"strings"
	"testing"
)

// Panel gives each object the result Object gives it alone: its workers
// take each object's candidates and screens from a scratch they reuse
// (scratch), and no result may keep any of it once the next object reuses
// it. Every field is compared, unexported ones and those behind pointers
// included, on a panel whose analyses take every path (breaks included);
// two workers at least, so that the scratch is reused.
func TestPanelIsObjectByObject(t *testing.T) {
	p, settings := mixedPanel()
	for _, storedOnly := range []bool{false, true} {
		s := settings
		s.StoredOnly = storedOnly
		got, err := Panel(context.Background(), p, s)
		if err != nil {
			t.Fatal(err)
		}
		alone := settings
		alone.shared = newShared(p, alone)
		for i := range p.Objects {
			want := Object(p, &p.Objects[i], alone)
			if storedOnly {
				want.Fits = want.Stored()
				if want.Unbroken != nil {
					want.Unbroken.Fits = want.Unbroken.Stored()
				}
			}
			if g, w := deepText(reflect.ValueOf(got[i])), deepText(reflect.ValueOf(want)); g != w {
				t.Fatalf("StoredOnly %v, %s: Panel gives\n%s\nObject alone\n%s", storedOnly, p.Objects[i].Object, g, w)
			}
		}
	}
}

// deepText writes v out in full, following pointers, unexported fields
// included, NaN as NaN: two values with the same text hold the same data.
func deepText(v reflect.Value) string {
	var b strings.Builder
	var walk func(v reflect.Value)
	walk = func(v reflect.Value) {
		switch v.Kind() {
		case reflect.Pointer, reflect.Interface:
			if v.IsNil() {
				b.WriteString("nil")
				return
			}
			if v.Kind() == reflect.Interface && v.Elem().Type().Implements(reflect.TypeFor[error]()) {
				b.WriteString("error")
				return
			}
			walk(v.Elem())
		case reflect.Struct:
			b.WriteString("{")
			for i := range v.NumField() {
				fmt.Fprintf(&b, "%s:", v.Type().Field(i).Name)
				walk(v.Field(i))
				b.WriteString(" ")
			}
			b.WriteString("}")
		case reflect.Slice, reflect.Array:
			if v.Kind() == reflect.Slice && v.IsNil() {
				b.WriteString("nil")
				return
			}
			b.WriteString("[")
			for i := range v.Len() {
				walk(v.Index(i))
				b.WriteString(" ")
			}
			b.WriteString("]")
		case reflect.Map:
			keys := v.MapKeys()
			sort.Slice(keys, func(i, j int) bool { return fmt.Sprint(keys[i]) < fmt.Sprint(keys[j]) })
			b.WriteString("map[")
			for _, k := range keys {
				walk(k)
				b.WriteString(":")
				walk(v.MapIndex(k))
				b.WriteString(" ")
			}
			b.WriteString("]")
		case reflect.Float32, reflect.Float64:
			b.WriteString(strconv.FormatFloat(v.Float(), 'g', -1, 64))
		case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
			b.WriteString(strconv.FormatInt(v.Int(), 10))
		case reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
			b.WriteString(strconv.FormatUint(v.Uint(), 10))
		case reflect.Bool:
			b.WriteString(strconv.FormatBool(v.Bool()))
		case reflect.String:
			b.WriteString(strconv.Quote(v.String()))
		default:
			fmt.Fprintf(&b, "<%s>", v.Kind())
		}
	}
	walk(v)
	return b.String()
}
