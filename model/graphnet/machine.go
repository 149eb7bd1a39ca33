package graphnet

import (
	"fmt"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// machine runs the ops of one expression graph, in a topological order
// fixed when it is made, allocating nothing itself: every op node has a
// preallocated slice of its inputs and a slot for its value. The values of
// leaf nodes (weights bound with gorgonia.WithValue, constants bound with
// gorgonia.Let, gorgonia's constants) are the values they were bound to
// when the machine was made; a caller changes them in place. The ops of
// package ops reuse their output buffers, so a run of a graph built from
// them allocates nothing once every op has run once.
type machine struct {
	steps []step
	index map[*gorgonia.Node]int // position in steps of each op node
	fixed map[*gorgonia.Node]gorgonia.Value
}

// step is one op node: its inputs, where each comes from, and its value.
type step struct {
	node *gorgonia.Node
	op   gorgonia.Op
	// from[i] is the step whose value is input i, or −1 for a leaf
	// node's value, set once in inputs[i].
	from   []int
	inputs []gorgonia.Value
	value  gorgonia.Value // the result of the last run, nil before
}

// newMachine returns the machine of g, whose nodes run in the order of
// gorgonia's tape machine (the reverse of gorgonia.Sort). With outputs,
// it runs only the ops whose values they need (a node that no output
// reads, such as a gradient that a fused op computes itself, never runs);
// without, every op of g. Every leaf node it reads must have a value.
func newMachine(g *gorgonia.ExprGraph, outputs ...*gorgonia.Node) (*machine, error) {
	sorted, err := gorgonia.Sort(g)
	if err != nil {
		return nil, fmt.Errorf("graphnet: ordering the graph: %w", err)
	}
	needed := neededBy(g, outputs)
	m := &machine{index: make(map[*gorgonia.Node]int), fixed: make(map[*gorgonia.Node]gorgonia.Value)}
	for i := len(sorted) - 1; i >= 0; i-- {
		n := sorted[i]
		if needed != nil && !needed[n] {
			continue
		}
		children := g.From(n.ID()) // in the order of the op's inputs
		if children.Len() == 0 {
			v := n.Value()
			if v == nil {
				return nil, fmt.Errorf("graphnet: node %v (%v) has neither inputs nor a value", n.Name(), n.Op())
			}
			m.fixed[n] = v
			continue
		}
		if n.Op() == nil {
			return nil, fmt.Errorf("graphnet: node %v has inputs but no op", n.Name())
		}
		s := step{node: n, op: n.Op()}
		for children.Next() {
			c := children.Node().(*gorgonia.Node)
			if v, ok := m.fixed[c]; ok {
				s.from = append(s.from, -1)
				s.inputs = append(s.inputs, v)
				continue
			}
			j, ok := m.index[c]
			if !ok {
				return nil, fmt.Errorf("graphnet: node %v: input %v comes after it in the order", n.Name(), c.Name())
			}
			s.from = append(s.from, j)
			s.inputs = append(s.inputs, nil)
		}
		m.index[n] = len(m.steps)
		m.steps = append(m.steps, s)
	}
	return m, nil
}

// neededBy returns the nodes of g that outputs read, directly or not,
// with the outputs themselves; nil for no outputs.
func neededBy(g *gorgonia.ExprGraph, outputs []*gorgonia.Node) map[*gorgonia.Node]bool {
	if len(outputs) == 0 {
		return nil
	}
	needed := make(map[*gorgonia.Node]bool)
	stack := append([]*gorgonia.Node(nil), outputs...)
	for len(stack) > 0 {
		n := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		if n == nil || needed[n] {
			continue
		}
		needed[n] = true
		for it := g.From(n.ID()); it.Next(); {
			stack = append(stack, it.Node().(*gorgonia.Node))
		}
	}
	return needed
}

// run runs every op once, in order. An error names the node that failed.
func (m *machine) run() error {
	for i := range m.steps {
		s := &m.steps[i]
		for k, j := range s.from {
			if j >= 0 {
				s.inputs[k] = m.steps[j].value
			}
		}
		v, err := s.op.Do(s.inputs...)
		if err != nil {
			return fmt.Errorf("graphnet: running node %v (%v): %w", s.node.Name(), s.op, err)
		}
		s.value = v
	}
	return nil
}

// dense returns the value of n after a run as a dense tensor, valid until
// the next run. n must be a node of the machine's graph whose value is a
// *tensor.Dense.
func (m *machine) dense(n *gorgonia.Node) *tensor.Dense {
	var v gorgonia.Value
	if i, ok := m.index[n]; ok {
		v = m.steps[i].value
	} else {
		v = m.fixed[n]
	}
	d, ok := v.(*tensor.Dense)
	if !ok {
		panic(fmt.Sprintf("graphnet: the value of node %v is a %T, want a *tensor.Dense", n.Name(), v))
	}
	return d
}
