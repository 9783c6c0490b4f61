package export

import (
	"bytes"
	"encoding/json"
	"fmt"
	"reflect"
	"strings"
)

// modelKeys are the JSON keys of every object in a model file, by their
// letter-case-folded form.
var modelKeys = jsonKeys(reflect.TypeFor[Model](), map[string]string{})

// mapKeys are keys whose object value is a map of the user's names (column
// names), where any key is allowed.
var mapKeys = map[string]bool{"kinds": true}

// jsonKeys adds the JSON keys of t's fields, and of the structs they hold,
// to keys.
func jsonKeys(t reflect.Type, keys map[string]string) map[string]string {
	for t.Kind() == reflect.Pointer || t.Kind() == reflect.Slice || t.Kind() == reflect.Map {
		t = t.Elem()
	}
	if t.Kind() != reflect.Struct {
		return keys
	}
	for i := range t.NumField() {
		f := t.Field(i)
		name, _, _ := strings.Cut(f.Tag.Get("json"), ",")
		if name != "" && name != "-" {
			keys[strings.ToLower(name)] = name
		}
		if _, seen := keys["\x00"+f.Type.String()]; !seen {
			keys["\x00"+f.Type.String()] = ""
			jsonKeys(f.Type, keys)
		}
	}
	return keys
}

// jsonContainer is an object or array open while checkKeys walks a file.
type jsonContainer struct {
	object  bool
	wantKey bool            // an object's next token is a key
	seen    map[string]bool // an object's keys so far
	userMap bool            // an object whose keys are the user's names
}

// checkKeys refuses what encoding/json would accept without a word: a key
// that repeats in one object (the last would win) and a key that differs
// from a model key only in letter case (it would fill that field). A file
// that is not valid JSON passes, for the decoder to describe.
func checkKeys(b []byte) error {
	dec := json.NewDecoder(bytes.NewReader(b))
	var stack []*jsonContainer
	// valueDone is called when a value ends: in an object, a key is next.
	valueDone := func() {
		if n := len(stack); n > 0 && stack[n-1].object {
			stack[n-1].wantKey = true
		}
	}
	lastKey := ""
	for {
		tok, err := dec.Token()
		if err != nil {
			return nil
		}
		if n := len(stack); n > 0 && stack[n-1].object && stack[n-1].wantKey {
			top := stack[n-1]
			key, ok := tok.(string)
			if !ok { // the object's closing brace
				stack = stack[:n-1]
				valueDone()
				continue
			}
			if top.seen[key] {
				return fmt.Errorf("the key %q appears twice in one object", key)
			}
			top.seen[key] = true
			if exact, known := modelKeys[strings.ToLower(key)]; known && exact != key && !top.userMap {
				return fmt.Errorf("the key %q differs from %q only in letter case", key, exact)
			}
			top.wantKey, lastKey = false, key
			continue
		}
		switch tok {
		case json.Delim('{'):
			stack = append(stack, &jsonContainer{object: true, wantKey: true, seen: map[string]bool{}, userMap: mapKeys[lastKey]})
		case json.Delim('['):
			stack = append(stack, &jsonContainer{})
		case json.Delim(']'):
			stack = stack[:len(stack)-1]
			valueDone()
		default:
			valueDone()
		}
		lastKey = ""
	}
}
