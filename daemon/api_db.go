package daemon

import (
	"net/http"
	"strconv"
	"time"

	"holdfast/daemon/store"
)

// apiBackup answers POST /api/v1/db/backup (bearer token) with a consistent
// copy of the whole store file, streamed from one read transaction
// (store.Backup, bbolt's Tx.WriteTo) while polling goes on. The size is
// not known up front; a copy cut short by an error lacks the trailer
// Holdfast-Backup-Bytes, which a complete one carries.
func (d *Daemon) apiBackup(w http.ResponseWriter, r *http.Request) {
	w.Header().Set("Content-Type", "application/octet-stream")
	w.Header().Set("Content-Disposition", `attachment; filename="holdfast-`+d.clock.Now().UTC().Format("20060102T150405Z")+`.db"`)
	w.Header().Set("Trailer", "Holdfast-Backup-Bytes")
	start := time.Now()
	n, err := d.store.Backup(w)
	if err != nil {
		d.log.Error("backup failed", "bytes", n, "err", err)
		return
	}
	w.Header().Set("Holdfast-Backup-Bytes", strconv.FormatInt(n, 10))
	d.log.Info("backup sent", "bytes", n, "duration_seconds", time.Since(start).Seconds())
}

// DBStatsJSON is what holdfast db stats --json prints and GET
// /api/v1/db/stats returns: per series, the file, and the totals.
type DBStatsJSON struct {
	Samples        int            `json:"samples"`       // all series
	PayloadBytes   int64          `json:"payload_bytes"` // chunk bytes of all series
	FileBytes      int64          `json:"file_bytes"`    // the file's size on disk
	BytesPerSample float64        `json:"bytes_per_sample"`
	File           DBFileJSON     `json:"file"`
	Series         []DBSeriesJSON `json:"series"`
}

// DBFileJSON describes the store file.
type DBFileJSON struct {
	Path      string `json:"path"`
	UsedBytes int64  `json:"used_bytes"` // up to the highest page in use
	PageSize  int    `json:"page_size"`
	FreePages int    `json:"free_pages"` // reusable pages; holdfast db compact gives them back
}

// DBSeriesJSON describes one series.
type DBSeriesJSON struct {
	Gauge          string    `json:"gauge"`
	Samples        int       `json:"samples"`
	First          time.Time `json:"first,omitzero"`
	Last           time.Time `json:"last,omitzero"`
	Chunks         int       `json:"chunks"`
	DamagedChunks  int       `json:"damaged_chunks,omitempty"`
	PayloadBytes   int64     `json:"payload_bytes"`
	BytesPerSample float64   `json:"bytes_per_sample"`
}

// DBStats measures a store.
func DBStats(db *store.DB) (DBStatsJSON, error) {
	var out DBStatsJSON
	ss, err := db.SeriesStats()
	if err != nil {
		return out, err
	}
	fs, err := db.FileStats()
	if err != nil {
		return out, err
	}
	out.FileBytes = fs.FileBytes
	out.File = DBFileJSON{Path: fs.Path, UsedBytes: fs.UsedBytes, PageSize: fs.PageSize, FreePages: fs.FreePages}
	out.Series = make([]DBSeriesJSON, 0, len(ss))
	for _, s := range ss {
		out.Samples += s.Samples
		out.PayloadBytes += s.PayloadBytes
		out.Series = append(out.Series, DBSeriesJSON{Gauge: s.Series, Samples: s.Samples, First: s.First, Last: s.Last,
			Chunks: s.Chunks, DamagedChunks: s.Damaged, PayloadBytes: s.PayloadBytes, BytesPerSample: s.BytesPerSample()})
	}
	if out.Samples > 0 {
		out.BytesPerSample = float64(out.PayloadBytes) / float64(out.Samples)
	}
	return out, nil
}

func (d *Daemon) apiDBStats(w http.ResponseWriter, _ *http.Request) {
	st, err := DBStats(d.store)
	if err != nil {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	writeJSON(w, st)
}
