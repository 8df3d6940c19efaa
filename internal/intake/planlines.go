package intake

import "strings"

// keyLines finds, for each dotted key path in a TOML document, the line on
// which it is first defined, so that plan errors can name a line. It reads
// table headers ([a.b], [[a.b]]) and "key = value" lines with bare, quoted or
// dotted keys; that covers plan files as people write them. Lines inside
// multi-line strings are skipped. A key it cannot place is simply absent.
func keyLines(text string) map[string]int {
	lines := map[string]int{}
	add := func(path []string, line int) {
		for k := 1; k <= len(path); k++ {
			key := strings.Join(path[:k], ".")
			if _, ok := lines[key]; !ok {
				lines[key] = line
			}
		}
	}
	var table []string
	inMulti := ""
	for i, ln := range strings.Split(text, "\n") {
		n := i + 1
		s := strings.TrimSpace(ln)
		if inMulti != "" {
			if strings.Count(s, inMulti)%2 == 1 {
				inMulti = ""
			}
			continue
		}
		if s == "" || s[0] == '#' {
			continue
		}
		if s[0] == '[' {
			inner := strings.TrimLeft(s, "[")
			if j := strings.Index(inner, "]"); j >= 0 {
				inner = inner[:j]
			}
			table = splitKey(inner)
			add(table, n)
			continue
		}
		eq := keyEnd(s)
		if eq < 0 {
			continue
		}
		path := append(append([]string(nil), table...), splitKey(s[:eq])...)
		add(path, n)
		rest := s[eq+1:]
		for _, q := range []string{`"""`, `'''`} {
			if strings.Count(rest, q)%2 == 1 {
				inMulti = q
			}
		}
	}
	return lines
}

// keyEnd returns the index of the '=' that ends the key of a key/value
// line, skipping '=' inside quoted keys, or -1.
func keyEnd(s string) int {
	var quote byte
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case quote != 0:
			if c == quote {
				quote = 0
			}
		case c == '"' || c == '\'':
			quote = c
		case c == '=':
			return i
		}
	}
	return -1
}

// splitKey splits a dotted TOML key into its parts, unquoting quoted parts.
func splitKey(s string) []string {
	var parts []string
	var b strings.Builder
	var quote byte
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case quote != 0:
			if c == quote {
				quote = 0
			} else {
				b.WriteByte(c)
			}
		case c == '"' || c == '\'':
			quote = c
		case c == '.':
			parts = append(parts, strings.TrimSpace(b.String()))
			b.Reset()
		case c == ' ' || c == '\t':
		default:
			b.WriteByte(c)
		}
	}
	return append(parts, strings.TrimSpace(b.String()))
}

// lineOf returns the line of key, or of its longest defined parent, or 0.
func lineOf(lines map[string]int, key string) int {
	for {
		if n, ok := lines[key]; ok {
			return n
		}
		j := strings.LastIndexByte(key, '.')
		if j < 0 {
			return 0
		}
		key = key[:j]
	}
}
