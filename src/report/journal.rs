//! The sample journal: one binary record per finished sample, appended as samples complete, so
//! an interrupted run keeps its work and shards can be merged exactly. Each record is framed by
//! its length and a checksum; a record cut short by a kill is dropped on reading (that sample
//! simply runs again on resume), while a whole record that fails its checksum is reported as
//! corrupt, with the sample it claims.
//!
//! Layout (little-endian): u32 payload length, payload, u32 FNV-1a checksum of the payload.
//! Payload: u64 index; u8 status (0 ok, 1 invalid, 2 failed), u32 message length, message (the
//! invalid draw's rule, or the failed forecast's typed stop reason as JSON);
//! u32 value count, f64 values; two ends of life, each u8 present + f64 cycles, efc, years;
//! f64 state of health at the horizon, resistance growth at the horizon, state of health at the
//! warranty point; u16 warning kinds (one bit each, `forecast::WarningKind`); u32 point count,
//! 3 × f32 per point.

use crate::ensemble::{SampleRecord, SampleStatus};
use crate::forecast::{LifeAt, WarningSet};

fn checksum(bytes: &[u8]) -> u32 {
    // FNV-1a, 32 bit: enough to tell a torn write from a whole record.
    bytes.iter().fold(0x811c_9dc5u32, |h, &b| (h ^ b as u32).wrapping_mul(0x0100_0193))
}

/// The bytes of one journal record.
pub fn encode_record(r: &SampleRecord) -> Vec<u8> {
    let mut p = Vec::with_capacity(128 + 12 * r.curves.len() + 8 * r.values.len());
    p.extend_from_slice(&r.index.to_le_bytes());
    let stopped;
    let (code, message) = match &r.status {
        SampleStatus::Ok => (0u8, ""),
        SampleStatus::Invalid(m) => (1, m.as_str()),
        SampleStatus::Failed { stop, cycling } => {
            // The typed stop reason, as JSON: merged and resumed runs read it back whole.
            stopped = serde_json::json!({ "stop": stop, "cycling": cycling }).to_string();
            (2, stopped.as_str())
        }
    };
    p.push(code);
    p.extend_from_slice(&(message.len() as u32).to_le_bytes());
    p.extend_from_slice(message.as_bytes());
    p.extend_from_slice(&(r.values.len() as u32).to_le_bytes());
    for v in &r.values {
        p.extend_from_slice(&v.to_le_bytes());
    }
    for end in [r.capacity_end, r.resistance_end] {
        p.push(end.is_some() as u8);
        let at = end.unwrap_or(LifeAt { cycles: 0.0, efc: 0.0, years: 0.0 });
        for v in [at.cycles, at.efc, at.years] {
            p.extend_from_slice(&v.to_le_bytes());
        }
    }
    for v in [r.soh_at_horizon_pct, r.resistance_growth_at_horizon_pct, r.soh_at_warranty_pct] {
        p.extend_from_slice(&v.to_le_bytes());
    }
    p.extend_from_slice(&r.warnings.0.to_le_bytes());
    p.extend_from_slice(&(r.curves.len() as u32).to_le_bytes());
    for point in &r.curves {
        for v in point {
            p.extend_from_slice(&v.to_le_bytes());
        }
    }
    let mut out = Vec::with_capacity(p.len() + 8);
    out.extend_from_slice(&(p.len() as u32).to_le_bytes());
    out.extend_from_slice(&p);
    out.extend_from_slice(&checksum(&p).to_le_bytes());
    out
}

/// Reads a little-endian payload front to back.
struct Reader<'a> {
    bytes: &'a [u8],
    at: usize,
}

impl<'a> Reader<'a> {
    fn take(&mut self, n: usize) -> Option<&'a [u8]> {
        let slice = self.bytes.get(self.at..self.at + n)?;
        self.at += n;
        Some(slice)
    }
    fn u8(&mut self) -> Option<u8> {
        self.take(1).map(|b| b[0])
    }
    fn u32(&mut self) -> Option<u32> {
        self.take(4).map(|b| u32::from_le_bytes(b.try_into().unwrap_or([0; 4])))
    }
    fn u64(&mut self) -> Option<u64> {
        self.take(8).map(|b| u64::from_le_bytes(b.try_into().unwrap_or([0; 8])))
    }
    fn f64(&mut self) -> Option<f64> {
        self.u64().map(f64::from_bits)
    }
    fn f32(&mut self) -> Option<f32> {
        self.u32().map(f32::from_bits)
    }
}

fn decode_payload(payload: &[u8]) -> Option<SampleRecord> {
    let mut r = Reader { bytes: payload, at: 0 };
    let index = r.u64()?;
    let code = r.u8()?;
    let length = r.u32()? as usize;
    let message = String::from_utf8(r.take(length)?.to_vec()).ok()?;
    let status = match code {
        0 => SampleStatus::Ok,
        1 => SampleStatus::Invalid(message),
        2 => {
            let value: serde_json::Value = serde_json::from_str(&message).ok()?;
            let stop = serde_json::from_value(value.get("stop")?.clone()).ok()?;
            SampleStatus::Failed { stop, cycling: value.get("cycling")?.as_bool()? }
        }
        _ => return None,
    };
    let count = r.u32()? as usize;
    let values = (0..count).map(|_| r.f64()).collect::<Option<Vec<f64>>>()?;
    let mut end = || -> Option<Option<LifeAt>> {
        let present = r.u8()? == 1;
        let at = LifeAt { cycles: r.f64()?, efc: r.f64()?, years: r.f64()? };
        Some(present.then_some(at))
    };
    let capacity_end = end()?;
    let resistance_end = end()?;
    let soh_at_horizon_pct = r.f64()?;
    let resistance_growth_at_horizon_pct = r.f64()?;
    let soh_at_warranty_pct = r.f64()?;
    let warnings = WarningSet(u16::from_le_bytes(r.take(2)?.try_into().ok()?));
    let points = r.u32()? as usize;
    let curves = (0..points).map(|_| Some([r.f32()?, r.f32()?, r.f32()?])).collect::<Option<Vec<[f32; 3]>>>()?;
    (r.at == payload.len()).then_some(SampleRecord {
        index,
        values,
        status,
        capacity_end,
        resistance_end,
        soh_at_horizon_pct,
        resistance_growth_at_horizon_pct,
        soh_at_warranty_pct,
        warnings,
        curves,
    })
}

/// A journal as read: its whole records in file order, and how reading ended.
#[derive(Debug, Clone, PartialEq)]
pub struct JournalRead {
    pub records: Vec<SampleRecord>,
    pub ending: JournalEnding,
}

/// How reading a journal ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum JournalEnding {
    /// Every byte belonged to a whole record.
    Whole,
    /// The last record is cut short: the tail an interrupted run leaves (records are appended
    /// with one write each, so a kill can only shorten the last one).
    TornTail,
    /// A record whose frame is complete fails its checksum or does not decode: the file was
    /// changed or damaged. `record` counts from 1; `sample` is the index the record claims, if
    /// its first bytes can be read.
    Corrupt { record: usize, sample: Option<u64> },
}

/// Every whole record in a journal's bytes, in file order, up to the first record that is
/// cut short (a torn tail) or damaged (corrupt); the ending says which.
pub fn decode_journal(bytes: &[u8]) -> JournalRead {
    let mut records = Vec::new();
    let mut at = 0;
    let ending = loop {
        if at == bytes.len() {
            break JournalEnding::Whole;
        }
        let Some(frame) = bytes.get(at..at + 4) else { break JournalEnding::TornTail };
        let length = u32::from_le_bytes([frame[0], frame[1], frame[2], frame[3]]) as usize;
        let (Some(payload), Some(sum)) =
            (bytes.get(at + 4..at + 4 + length), bytes.get(at + 4 + length..at + 8 + length))
        else {
            break JournalEnding::TornTail;
        };
        let decoded = (u32::from_le_bytes([sum[0], sum[1], sum[2], sum[3]]) == checksum(payload))
            .then(|| decode_payload(payload))
            .flatten();
        match decoded {
            Some(record) => records.push(record),
            None => {
                let sample = payload.get(..8).and_then(|b| b.try_into().ok()).map(u64::from_le_bytes);
                break JournalEnding::Corrupt { record: records.len() + 1, sample };
            }
        }
        at += 8 + length;
    };
    JournalRead { records, ending }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn record(index: u64) -> SampleRecord {
        SampleRecord {
            index,
            values: vec![1.5, -2.25e-16],
            status: if index.is_multiple_of(2) {
                SampleStatus::Ok
            } else {
                SampleStatus::Failed {
                    stop: crate::forecast::StopReason::Failed {
                        at: 3.0,
                        last_soh_pct: Some(71.0),
                        failure: crate::forecast::ForecastFailure::Cycle { detail: "x".into() },
                    },
                    cycling: true,
                }
            },
            capacity_end: Some(LifeAt { cycles: 1234.5, efc: 1000.25, years: 3.5 }),
            resistance_end: None,
            soh_at_horizon_pct: 71.125,
            resistance_growth_at_horizon_pct: 40.0,
            soh_at_warranty_pct: f64::NAN,
            warnings: WarningSet(if index == 1 { 0b101 } else { 0 }),
            curves: vec![[5.0, 100.0, 16.0], [4.5, 90.0, 18.5]],
        }
    }

    #[test]
    fn records_round_trip_bit_for_bit() {
        let mut bytes = Vec::new();
        for i in 0..3 {
            bytes.extend(encode_record(&record(i)));
        }
        let read = decode_journal(&bytes);
        assert_eq!(read.ending, JournalEnding::Whole);
        let back = read.records;
        assert_eq!(back.len(), 3);
        for (i, r) in back.iter().enumerate() {
            let original = record(i as u64);
            assert_eq!(r.values, original.values);
            assert_eq!(r.status, original.status);
            assert!(r.soh_at_warranty_pct.is_nan());
            assert_eq!(r.curves, original.curves);
            assert_eq!(r.capacity_end, original.capacity_end);
        }
    }

    #[test]
    fn a_torn_tail_is_dropped() {
        let mut bytes = encode_record(&record(0));
        let second = encode_record(&record(1));
        bytes.extend_from_slice(&second[..second.len() - 3]);
        let read = decode_journal(&bytes);
        assert_eq!((read.records.len(), read.ending), (1, JournalEnding::TornTail));
    }

    #[test]
    fn a_changed_byte_in_a_whole_record_is_corrupt_and_names_the_sample() {
        let mut bytes = encode_record(&record(0));
        let second = encode_record(&record(7));
        let last_value = bytes.len() + second.len() - 10;
        bytes.extend_from_slice(&second);
        bytes.extend(encode_record(&record(2)));
        bytes[last_value] ^= 0x40;
        let read = decode_journal(&bytes);
        assert_eq!(read.records.len(), 1);
        assert_eq!(read.ending, JournalEnding::Corrupt { record: 2, sample: Some(7) });
    }
}
