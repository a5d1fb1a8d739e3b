//! Batch reader and runner: any bytes give a header error, a read stop, or
//! one output row per input record at least; never a panic.
#![no_main]
use burnout::batch::reader::{RawRecord, RecordReader};
use burnout::batch::{Batch, BatchError, BatchOptions};
use burnout::report::batch::BatchCsv;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    // The record reader alone: fields it keeps never exceed the record.
    let mut reader = RecordReader::new(data, 64);
    let mut rec = RawRecord::new();
    let mut records = 0u64;
    while let Ok(true) = reader.read(&mut rec) {
        records += 1;
        for i in 0..rec.len().min(64) {
            assert!(rec.get(i).is_some() || rec.is_oversized());
        }
        assert!(rec.first_line() <= rec.last_line());
    }
    assert!(reader.bytes_read() <= data.len() as u64);
    // The whole batch, solving each row.
    let Ok(batch) = Batch::open(data) else {
        return;
    };
    let opts = BatchOptions {
        parallel: false,
        ..BatchOptions::default()
    };
    let mut out = Vec::new();
    match batch.run(&BatchCsv::default(), &mut out, &opts, &mut |_, _| {}) {
        Ok(s) => {
            assert!(s.rows_written >= s.rows_read);
            assert!(s.rows_read < records.max(1));
        }
        Err(BatchError::Read { .. }) => {}
        Err(BatchError::Write(e)) => panic!("writing to a Vec failed: {e}"),
    }
});
