package pipeline

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
)

// utf8BOM is the UTF-8 encoding of U+FEFF, which some editors write at the
// start of a text file.
const utf8BOM = "\xef\xbb\xbf"

// ReadParamsObject reads the JSON object of a params file (path names
// it in errors): a leading UTF-8
// byte-order mark is skipped, a key given twice is an error naming the
// key (a JSON decoder would silently keep the last), and nothing may
// follow the object.
func ReadParamsObject(path string, data []byte) (map[string]any, error) {
	data = bytes.TrimPrefix(data, []byte(utf8BOM))
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.UseNumber()
	notObject := func(err error) error {
		return fmt.Errorf("params file %s: not a JSON object of parameters: %v", path, err)
	}
	tok, err := dec.Token()
	if err != nil {
		return nil, notObject(err)
	}
	if d, ok := tok.(json.Delim); !ok || d != '{' {
		return nil, notObject(fmt.Errorf("it starts with %v", tok))
	}
	m := map[string]any{}
	for dec.More() {
		tok, err := dec.Token()
		if err != nil {
			return nil, notObject(err)
		}
		k, ok := tok.(string)
		if !ok {
			return nil, notObject(fmt.Errorf("key %v is not a string", tok))
		}
		if _, dup := m[k]; dup {
			return nil, fmt.Errorf("params file %s: parameter %q is given twice", path, k)
		}
		var v any
		if err := dec.Decode(&v); err != nil {
			return nil, notObject(err)
		}
		m[k] = v
	}
	if _, err := dec.Token(); err != nil { // the closing brace
		return nil, notObject(err)
	}
	if _, err := dec.Token(); err != io.EOF {
		return nil, fmt.Errorf("params file %s: unexpected data after the JSON object", path)
	}
	return m, nil
}
