package store

import "reflect"

// clone returns a deep copy of *v: pointers, slices (json.RawMessage
// included) and maps are copied, never shared. An update changes the copy
// and audits the original as "before"; a shallow copy (`p := *before`)
// would let decoding a patch into the copy write through a shared pointer,
// slice or byte array into the record it came from.
func clone[T any](v *T) *T {
	out := new(T)
	deepCopy(reflect.ValueOf(out).Elem(), reflect.ValueOf(v).Elem())
	return out
}

func deepCopy(dst, src reflect.Value) {
	switch src.Kind() {
	case reflect.Pointer:
		if src.IsNil() {
			return
		}
		p := reflect.New(src.Elem().Type())
		deepCopy(p.Elem(), src.Elem())
		dst.Set(p)
	case reflect.Slice:
		if src.IsNil() {
			return
		}
		s := reflect.MakeSlice(src.Type(), src.Len(), src.Len())
		for i := 0; i < src.Len(); i++ {
			deepCopy(s.Index(i), src.Index(i))
		}
		dst.Set(s)
	case reflect.Map:
		if src.IsNil() {
			return
		}
		m := reflect.MakeMapWithSize(src.Type(), src.Len())
		for it := src.MapRange(); it.Next(); {
			val := reflect.New(it.Value().Type()).Elem()
			deepCopy(val, it.Value())
			m.SetMapIndex(it.Key(), val)
		}
		dst.Set(m)
	case reflect.Struct:
		// Assign the whole value first (unexported fields such as those of
		// time.Time are immutable values), then deep-copy what is exported.
		dst.Set(src)
		for i := 0; i < src.NumField(); i++ {
			if dst.Field(i).CanSet() {
				deepCopy(dst.Field(i), src.Field(i))
			}
		}
	case reflect.Interface:
		if src.IsNil() {
			return
		}
		val := reflect.New(src.Elem().Type()).Elem()
		deepCopy(val, src.Elem())
		dst.Set(val)
	default:
		dst.Set(src)
	}
}
