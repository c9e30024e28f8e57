package config

import (
	"path/filepath"
	"testing"
)

// Every planted mistake in bad-gas.yaml is reported, each on its own line.
func TestGasConfigProblems(t *testing.T) {
	path := filepath.Join("..", "..", "testdata", "config", "bad-gas.yaml")
	_, err := LoadConfig(path)
	if err == nil {
		t.Fatal("LoadConfig succeeded; want problems")
	}
	checkGolden(t, filepath.Join("..", "..", "testdata", "config", "bad-gas.golden"), err.Error()+"\n")
}
