package daemon

// linkDownReasons maps each gauge on a link that is down to why: the link's
// last error, such as a failed identity check ("identity check failed: sent
// ..., got ..."). Gauges on an up link, or on a simulator, are absent.
func (d *Daemon) linkDownReasons() map[string]string {
	out := map[string]string{}
	for _, l := range d.links {
		if l.stats == nil {
			continue
		}
		st := l.stats()
		if st.Up || st.LastError == "" {
			continue
		}
		var mark func(gs []*gauge)
		mark = func(gs []*gauge) {
			for _, g := range gs {
				out[g.name] = "link " + l.name + " down: " + st.LastError
				mark(g.fed)
			}
		}
		mark(l.gauges)
	}
	return out
}
