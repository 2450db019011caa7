package read

import (
	"bufio"
	"bytes"

	"github.com/ringlog/ringlog/pipeline"
)

// Data reads a recorder file that is already in memory; name is its path,
// used for format detection and in errors. The daemon reads each file once,
// hashes the bytes and parses the same bytes, so the content it records is
// exactly the content it analysed.
func Data(name string, data []byte, opt Options) (*pipeline.Recording, error) {
	if len(data) == 0 {
		return nil, fileErr(name, nil, "empty file")
	}
	br := bufio.NewReaderSize(bytes.NewReader(data), bufSize)
	head := data[:min(len(data), sniffLen)]
	return dispatch(br, head, name, opt, int64(len(data)))
}
