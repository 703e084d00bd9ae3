//! A minimal writer of NetCDF classic files (CDF-1; the NetCDF Classic Format Specification,
//! Unidata): fixed-size dimensions, attributes, and non-record variables of short, int, float
//! or double. Enough for the demo's CF sea-temperature files, byte-for-byte deterministic.

/// An attribute value.
pub(crate) enum AttrValue {
    /// NC_CHAR text.
    Text(String),
    /// NC_SHORT values.
    Short(Vec<i16>),
    /// NC_DOUBLE values.
    Double(Vec<f64>),
}

/// Values of a variable.
pub(crate) enum Data {
    /// NC_SHORT.
    Short(Vec<i16>),
    /// NC_DOUBLE.
    Double(Vec<f64>),
}

/// One variable: name, dimension indices (into the file's dimensions), attributes, values.
pub(crate) struct Var {
    pub name: String,
    pub dims: Vec<usize>,
    pub attrs: Vec<(String, AttrValue)>,
    pub data: Data,
}

const NC_DIMENSION: u32 = 0x0A;
const NC_VARIABLE: u32 = 0x0B;
const NC_ATTRIBUTE: u32 = 0x0C;
const NC_CHAR: u32 = 2;
const NC_SHORT: u32 = 3;
const NC_DOUBLE: u32 = 6;

fn pad4(out: &mut Vec<u8>) {
    while !out.len().is_multiple_of(4) {
        out.push(0);
    }
}

fn u32be(out: &mut Vec<u8>, v: u32) {
    out.extend_from_slice(&v.to_be_bytes());
}

fn name(out: &mut Vec<u8>, s: &str) {
    u32be(out, s.len() as u32);
    out.extend_from_slice(s.as_bytes());
    pad4(out);
}

fn attrs(out: &mut Vec<u8>, list: &[(String, AttrValue)]) {
    if list.is_empty() {
        out.extend_from_slice(&[0; 8]);
        return;
    }
    u32be(out, NC_ATTRIBUTE);
    u32be(out, list.len() as u32);
    for (n, v) in list {
        name(out, n);
        match v {
            AttrValue::Text(t) => {
                u32be(out, NC_CHAR);
                u32be(out, t.len() as u32);
                out.extend_from_slice(t.as_bytes());
            }
            AttrValue::Short(x) => {
                u32be(out, NC_SHORT);
                u32be(out, x.len() as u32);
                x.iter()
                    .for_each(|v| out.extend_from_slice(&v.to_be_bytes()));
            }
            AttrValue::Double(x) => {
                u32be(out, NC_DOUBLE);
                u32be(out, x.len() as u32);
                x.iter()
                    .for_each(|v| out.extend_from_slice(&v.to_be_bytes()));
            }
        }
        pad4(out);
    }
}

fn data_bytes(d: &Data) -> Vec<u8> {
    let mut out = Vec::new();
    match d {
        Data::Short(x) => x
            .iter()
            .for_each(|v| out.extend_from_slice(&v.to_be_bytes())),
        Data::Double(x) => x
            .iter()
            .for_each(|v| out.extend_from_slice(&v.to_be_bytes())),
    }
    pad4(&mut out);
    out
}

/// The bytes of a CDF-1 file with dimensions `dims` (name, length), global attributes
/// `globals` and variables `vars` (stored one after the other after the header).
pub(crate) fn write(
    dims: &[(&str, usize)],
    globals: &[(String, AttrValue)],
    vars: &[Var],
) -> Vec<u8> {
    let header = |offsets: &[u32]| -> Vec<u8> {
        let mut h = b"CDF\x01".to_vec();
        u32be(&mut h, 0); // numrecs: no record dimension
        u32be(&mut h, NC_DIMENSION);
        u32be(&mut h, dims.len() as u32);
        for (n, len) in dims {
            name(&mut h, n);
            u32be(&mut h, *len as u32);
        }
        attrs(&mut h, globals);
        u32be(&mut h, NC_VARIABLE);
        u32be(&mut h, vars.len() as u32);
        for (k, v) in vars.iter().enumerate() {
            name(&mut h, &v.name);
            u32be(&mut h, v.dims.len() as u32);
            v.dims.iter().for_each(|&d| u32be(&mut h, d as u32));
            attrs(&mut h, &v.attrs);
            u32be(
                &mut h,
                match v.data {
                    Data::Short(_) => NC_SHORT,
                    Data::Double(_) => NC_DOUBLE,
                },
            );
            u32be(&mut h, data_bytes(&v.data).len() as u32);
            u32be(&mut h, offsets[k]);
        }
        h
    };
    // The header's size does not depend on the offsets' values: lay it out once with zeros.
    let start = header(&vec![0; vars.len()]).len();
    let blobs: Vec<Vec<u8>> = vars.iter().map(|v| data_bytes(&v.data)).collect();
    let mut offsets = Vec::with_capacity(vars.len());
    let mut at = start;
    for b in &blobs {
        offsets.push(at as u32);
        at += b.len();
    }
    let mut out = header(&offsets);
    for b in blobs {
        out.extend(b);
    }
    out
}
