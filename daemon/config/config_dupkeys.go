package config

import (
	"fmt"
	"strconv"

	"gopkg.in/yaml.v3"
)

// duplicateKeys reports every key set twice in one mapping, once, at the
// repeat, naming where it was first set, and drops the repeat from the
// tree: yaml.v3 would otherwise refuse the whole mapping, and every gauge
// in it would be reported missing too.
func duplicateKeys(n *yaml.Node, path string, probs *[]Problem) {
	switch n.Kind {
	case yaml.MappingNode:
		first := map[string]int{}
		kept := n.Content[:0]
		for i := 0; i+1 < len(n.Content); i += 2 {
			k, val := n.Content[i], n.Content[i+1]
			p := k.Value
			if path != "" {
				p = path + "." + k.Value
			}
			if l, dup := first[k.Value]; dup {
				*probs = append(*probs, Problem{Line: k.Line, Path: p,
					Msg: fmt.Sprintf("duplicate key %q, first set at line %d; keep one", k.Value, l)})
				continue
			}
			first[k.Value] = k.Line
			kept = append(kept, k, val)
			duplicateKeys(val, p, probs)
		}
		n.Content = kept
	case yaml.SequenceNode:
		for i, c := range n.Content {
			duplicateKeys(c, path+"["+strconv.Itoa(i)+"]", probs)
		}
	}
}
