package fit

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/pelletier/go-toml/v2/unstable"
)

// The model file is decoded into a tree of values that remember where they
// stood in the file, so that every validation error can name its line.

type valueKind int

const (
	kindString valueKind = iota
	kindNumber
	kindBool
	kindTable
	kindArray
)

func (k valueKind) String() string {
	return [...]string{"a string", "a number", "true or false", "a table", "an array"}[k]
}

// value is one decoded TOML value with the 1-based line and column of the
// key that introduced it (or of the element, inside arrays).
type value struct {
	kind      valueKind
	str       string
	num       float64
	isInt     bool
	b         bool
	table     *table
	arr       []*value
	line, col int
}

// table is a TOML table with its keys in file order.
type table struct {
	keys []string
	vals map[string]*value
	line int
	used map[string]bool
	// defined is set once a [header] names the table explicitly.
	defined bool
}

func newTable(line int) *table {
	return &table{vals: map[string]*value{}, used: map[string]bool{}, line: line}
}

func (t *table) get(key string) (*value, bool) {
	v, ok := t.vals[key]
	if ok {
		t.used[key] = true
	}
	return v, ok
}

func (t *table) set(key string, v *value) error {
	if old, dup := t.vals[key]; dup {
		return fmt.Errorf("key %q is defined twice (first at line %d)", key, old.line)
	}
	t.keys = append(t.keys, key)
	t.vals[key] = v
	return nil
}

// tomlError is a syntax error in the TOML itself.
type tomlError struct {
	line, col int
	msg       string
}

func (e *tomlError) Error() string { return e.msg }

// parseTOML decodes doc into a positioned tree.
func parseTOML(doc []byte) (*table, error) {
	var p unstable.Parser
	p.Reset(doc)
	root := newTable(1)
	cur := root
	for p.NextExpression() {
		expr := p.Expression()
		switch expr.Kind {
		case unstable.Table, unstable.ArrayTable:
			keys, line, col := keyPath(&p, expr.Key())
			t, err := openTable(root, keys, expr.Kind == unstable.ArrayTable, line)
			if err != nil {
				return nil, &tomlError{line, col, err.Error()}
			}
			cur = t
		case unstable.KeyValue:
			if err := setKeyValue(&p, cur, expr); err != nil {
				return nil, err
			}
		}
	}
	if err := p.Error(); err != nil {
		var pe *unstable.ParserError
		if errors.As(err, &pe) && pe.Highlight != nil {
			sh := p.Shape(p.Range(pe.Highlight))
			return nil, &tomlError{sh.Start.Line, sh.Start.Column, pe.Message}
		}
		return nil, &tomlError{0, 0, err.Error()}
	}
	return root, nil
}

func keyPath(p *unstable.Parser, it unstable.Iterator) (keys []string, line, col int) {
	for it.Next() {
		n := it.Node()
		if len(keys) == 0 {
			sh := p.Shape(n.Raw)
			line, col = sh.Start.Line, sh.Start.Column
		}
		keys = append(keys, string(n.Data))
	}
	return keys, line, col
}

// openTable finds or creates the table named by keys below root; for an
// array table it appends a new element.
func openTable(root *table, keys []string, array bool, line int) (*table, error) {
	t := root
	for i, k := range keys {
		last := i == len(keys)-1
		v, ok := t.vals[k]
		switch {
		case !ok && last && array:
			nt := newTable(line)
			t.set(k, &value{kind: kindArray, arr: []*value{{kind: kindTable, table: nt, line: line}}, line: line})
			return nt, nil
		case !ok:
			nt := newTable(line)
			nt.defined = last
			t.set(k, &value{kind: kindTable, table: nt, line: line})
			t = nt
		case v.kind == kindArray && len(v.arr) > 0 && v.arr[0].kind == kindTable:
			if last && array {
				nt := newTable(line)
				v.arr = append(v.arr, &value{kind: kindTable, table: nt, line: line})
				return nt, nil
			}
			if last {
				return nil, fmt.Errorf("[%s] is an array of tables (write [[%s]])", strings.Join(keys, "."), strings.Join(keys, "."))
			}
			t = v.arr[len(v.arr)-1].table
		case v.kind == kindTable:
			if last && array {
				return nil, fmt.Errorf("[[%s]] was already defined as a plain table at line %d", strings.Join(keys, "."), v.line)
			}
			if last && v.table.defined {
				return nil, fmt.Errorf("table [%s] is defined twice (first at line %d)", strings.Join(keys, "."), v.table.line)
			}
			if last {
				v.table.defined, v.table.line = true, line
			}
			t = v.table
		default:
			return nil, fmt.Errorf("%q is already a value (line %d), not a table", k, v.line)
		}
	}
	return t, nil
}

func setKeyValue(p *unstable.Parser, t *table, kv *unstable.Node) error {
	keys, line, col := keyPath(p, kv.Key())
	for _, k := range keys[:len(keys)-1] {
		v, ok := t.vals[k]
		if !ok {
			nt := newTable(line)
			t.set(k, &value{kind: kindTable, table: nt, line: line, col: col})
			t = nt
			continue
		}
		if v.kind != kindTable {
			return &tomlError{line, col, fmt.Sprintf("%q is already a value (line %d), not a table", k, v.line)}
		}
		t = v.table
	}
	v, err := decodeValue(p, kv.Value(), line, col)
	if err != nil {
		return err
	}
	if err := t.set(keys[len(keys)-1], v); err != nil {
		return &tomlError{line, col, err.Error()}
	}
	return nil
}

func decodeValue(p *unstable.Parser, n *unstable.Node, line, col int) (*value, error) {
	v := &value{line: line, col: col}
	bad := func(format string, a ...any) error {
		return &tomlError{line, col, fmt.Sprintf(format, a...)}
	}
	switch n.Kind {
	case unstable.String:
		v.kind, v.str = kindString, string(n.Data)
	case unstable.Bool:
		v.kind, v.b = kindBool, string(n.Data) == "true"
	case unstable.Integer:
		s := string(n.Data)
		i, err := strconv.ParseInt(s, 0, 64)
		if err != nil {
			return nil, bad("%q is not an integer", s)
		}
		v.kind, v.num, v.isInt = kindNumber, float64(i), true
	case unstable.Float:
		s := strings.ReplaceAll(string(n.Data), "_", "")
		var f float64
		switch strings.TrimLeft(s, "+-") {
		case "inf":
			f = math.Inf(1)
			if strings.HasPrefix(s, "-") {
				f = math.Inf(-1)
			}
		case "nan":
			f = math.NaN()
		default:
			var err error
			if f, err = strconv.ParseFloat(s, 64); err != nil {
				return nil, bad("%q is not a number", s)
			}
		}
		v.kind, v.num = kindNumber, f
	case unstable.Array:
		v.kind = kindArray
		it := n.Children()
		for it.Next() {
			c := it.Node()
			l, cl := line, col
			if c.Raw.Length > 0 {
				sh := p.Shape(c.Raw)
				l, cl = sh.Start.Line, sh.Start.Column
			}
			e, err := decodeValue(p, c, l, cl)
			if err != nil {
				return nil, err
			}
			v.arr = append(v.arr, e)
		}
	case unstable.InlineTable:
		v.kind, v.table = kindTable, newTable(line)
		it := n.Children()
		for it.Next() {
			if err := setKeyValue(p, v.table, it.Node()); err != nil {
				return nil, err
			}
		}
	default:
		return nil, bad("dates and times are not used in model files")
	}
	return v, nil
}
