//go:build !linux

package campaign

func (r root) sync(rels []string) error { return syncEach(r, rels) }
