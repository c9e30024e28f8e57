package store

import (
	"runtime"
	"testing"
)

func TestMappedResidentGrowsWithTheDataRead(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("measured on Linux only")
	}
	db := openTemp(t, Options{})
	pts := night8()["chamber"][:100000]
	for i := 0; i < len(pts); i += night8Flush {
		appendAll(db, "chamber", pts[i:min(i+night8Flush, len(pts))])
		if err := db.Flush(); err != nil {
			t.Fatal(err)
		}
	}
	n := 0
	if err := db.Range("chamber", minTime, maxTime, func(Point) bool { n++; return true }); err != nil || n != len(pts) {
		t.Fatalf("read %d points, %v", n, err)
	}
	got, err := db.MappedResident()
	if err != nil {
		t.Fatal(err)
	}
	// Every page of the series was just read through the map, so at least
	// the chunk bytes are resident, and never more than the file.
	if chunks := int64(chunkBytes(t, db, "chamber")); got < chunks || got > db.fileSize() {
		t.Fatalf("resident %d bytes; want between the chunks' %d and the file's %d", got, chunks, db.fileSize())
	}
}
