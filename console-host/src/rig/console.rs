//! A rig as the console's own requests: the `axis`, `zone` and `set acceptance=` lines
//! that load it into a controller. One function, [`console_requests`], makes them for
//! both `mwctl rig show --console` (which prints them) and `mwctl talk --rig FILE`
//! (which sends them to the simulated controller); the lines themselves come from the
//! core's [`rig_request`], the same code that writes the rig's part of `dump`.

use matterwave_core::console::controller::{rig_request, Dump, MAX_REPLY};
use matterwave_core::console::reply::ReplyWriter;

use super::RigFile;

/// The requests that load `r` into a controller with motion disabled, in order, each
/// without its line end (see [`rig_request`]).
pub fn console_requests(r: &RigFile) -> Vec<String> {
    let mut lines = Vec::new();
    for i in 0..=u8::MAX {
        let mut sink: Vec<u8> = Vec::new();
        let mut rw = ReplyWriter::<_, MAX_REPLY>::with_line_length(&mut sink, false);
        match rig_request(&r.rig, i, &mut rw) {
            Dump::Line => lines.push(rw.line().to_string()),
            Dump::Skip => {}
            Dump::End => break,
        }
    }
    lines
}
