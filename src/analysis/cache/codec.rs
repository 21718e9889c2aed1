//! The bytes of a cache entry: a magic line, the key's SHA-256, the result
//! with every f64 as its bit pattern, and a SHA-256 of all that; anything
//! but a whole, intact entry for the key decodes to nothing.

use std::fmt::Write as _;

use sha2::{Digest, Sha256};
use stackup_physics::fieldsolver::{Pair, SingleEnded, SolvedLine};

pub(super) const MAGIC: &str = "stackup-lint field-solver cache entry, format 2";
pub(super) fn hex(bytes: &[u8]) -> String {
    const DIGITS: &[u8; 16] = b"0123456789abcdef";
    let mut s = String::with_capacity(bytes.len() * 2);
    for b in bytes {
        s.push(DIGITS[usize::from(b >> 4)] as char);
        s.push(DIGITS[usize::from(b & 15)] as char);
    }
    s
}

pub(super) fn push_floats(out: &mut String, name: &str, v: &[f64]) {
    let _ = write!(out, "{name} {}", v.len());
    for x in v {
        let _ = write!(out, " {:016x}", x.to_bits());
    }
    out.push('\n');
}

/// The entry's bytes: magic line, the key's SHA-256, the result, then the
/// SHA-256 of everything before the checksum line.
pub(super) fn encode(digest: &[u8], value: &Result<SolvedLine, String>) -> Vec<u8> {
    let mut out = String::with_capacity(1024);
    match value {
        Err(message) => {
            let _ = write!(out, "err {}\n{message}\n", message.len());
        }
        Ok(s) => {
            let _ = writeln!(out, "ok {} {}", s.n, s.unknowns);
            push_floats(&mut out, "z_rel_error", &[s.z_rel_error]);
            push_floats(&mut out, "eps_rel_error", &[s.eps_rel_error]);
            push_floats(&mut out, "capacitance", &s.capacitance);
            push_floats(&mut out, "capacitance_vacuum", &s.capacitance_vacuum);
            push_floats(&mut out, "inductance", &s.inductance);
            push_floats(&mut out, "modal_eps_eff", &s.modal_eps_eff);
            let flat: Vec<f64> = s.filling.iter().flatten().copied().collect();
            push_floats(&mut out, "filling", &flat);
            match s.single {
                Some(x) => push_floats(&mut out, "single", &[x.z0, x.eps_eff]),
                None => push_floats(&mut out, "single", &[]),
            }
            match s.pair {
                Some(p) => push_floats(
                    &mut out,
                    "pair",
                    &[
                        p.z_even,
                        p.z_odd,
                        p.z_diff(),
                        p.z_common(),
                        p.eps_eff_even,
                        p.eps_eff_odd,
                    ],
                ),
                None => push_floats(&mut out, "pair", &[]),
            }
        }
    }
    seal(digest, out)
}

/// The entry's bytes around a result `body`: magic line, the key's
/// SHA-256, the body, then the SHA-256 of everything before that line.
pub(super) fn seal(digest: &[u8], body: String) -> Vec<u8> {
    let mut out = String::with_capacity(body.len() + 160);
    let _ = write!(out, "{MAGIC}\nkey {}\n", hex(digest));
    out.push_str(&body);
    let sum = hex(&Sha256::digest(out.as_bytes()));
    let _ = writeln!(out, "sha256 {sum}");
    out.into_bytes()
}

/// The result body of a whole, intact entry for the key whose SHA-256 is
/// `digest`; `None` for anything else.
pub(super) fn unseal<'a>(bytes: &'a [u8], digest: &[u8]) -> Option<&'a str> {
    // Checksum line: the last 72 bytes ("sha256 " + 64 hex + "\n").
    let body_len = bytes.len().checked_sub(72)?;
    let (body, tail) = bytes.split_at(body_len);
    let tail = std::str::from_utf8(tail).ok()?;
    let sum = tail.strip_prefix("sha256 ")?.strip_suffix('\n')?;
    if sum != hex(&Sha256::digest(body)) {
        return None;
    }
    let body = std::str::from_utf8(body).ok()?;
    let rest = body.strip_prefix(MAGIC)?.strip_prefix("\nkey ")?;
    let (key, rest) = rest.split_once('\n')?;
    (key == hex(digest)).then_some(rest)
}

/// Numbers stored by `put_numbers`, from an intact entry for `digest`.
pub(super) fn decode_numbers(bytes: &[u8], digest: &[u8]) -> Option<Vec<f64>> {
    let line = unseal(bytes, digest)?.strip_suffix('\n')?;
    let mut it = line.strip_prefix("num ")?.split(' ');
    let count: usize = it.next()?.parse().ok()?;
    let v = it
        .map(|h| bits_of(h).map(f64::from_bits))
        .collect::<Option<Vec<f64>>>()?;
    (v.len() == count).then_some(v)
}

/// A 64-bit pattern written as exactly 16 lowercase hex digits.
pub(super) fn bits_of(hex: &str) -> Option<u64> {
    if hex.len() != 16 {
        return None;
    }
    hex.bytes().try_fold(0u64, |acc, b| {
        let digit = match b {
            b'0'..=b'9' => b - b'0',
            b'a'..=b'f' => b - b'a' + 10,
            _ => return None,
        };
        Some(acc << 4 | u64::from(digit))
    })
}

/// Read an entry back; `None` for anything but a whole, intact entry for
/// the key whose SHA-256 is `digest`.
pub(super) fn decode(bytes: &[u8], digest: &[u8]) -> Option<Result<SolvedLine, String>> {
    let rest = unseal(bytes, digest)?;
    if let Some(rest) = rest.strip_prefix("err ") {
        let (len, rest) = rest.split_once('\n')?;
        let len: usize = len.parse().ok()?;
        let message = rest.get(..len)?;
        if rest.get(len..)? != "\n" {
            return None;
        }
        return Some(Err(message.to_string()));
    }
    let mut lines = rest.strip_suffix('\n')?.split('\n');
    let mut head = lines.next()?.strip_prefix("ok ")?.split(' ');
    let n: usize = head.next()?.parse().ok()?;
    let unknowns: usize = head.next()?.parse().ok()?;
    if head.next().is_some() {
        return None;
    }
    let mut floats = |name: &str| -> Option<Vec<f64>> {
        let mut it = lines.next()?.split(' ');
        if it.next()? != name {
            return None;
        }
        let count: usize = it.next()?.parse().ok()?;
        let mut v = Vec::with_capacity(count.min(64));
        for h in it {
            v.push(f64::from_bits(bits_of(h)?));
        }
        (v.len() == count).then_some(v)
    };
    let z_rel_error = *floats("z_rel_error")?.first()?;
    let eps_rel_error = *floats("eps_rel_error")?.first()?;
    let capacitance = floats("capacitance")?;
    let capacitance_vacuum = floats("capacitance_vacuum")?;
    let inductance = floats("inductance")?;
    let modal_eps_eff = floats("modal_eps_eff")?;
    // One n×n matrix per dielectric region.
    let flat = floats("filling")?;
    let nn = n.checked_mul(n).filter(|&k| k > 0)?;
    if flat.len() % nn != 0 {
        return None;
    }
    let filling: Vec<Vec<f64>> = flat.chunks(nn).map(<[f64]>::to_vec).collect();
    let single = match floats("single")?.as_slice() {
        [] => None,
        [z0, eps_eff] => Some(SingleEnded {
            z0: *z0,
            eps_eff: *eps_eff,
        }),
        _ => return None,
    };
    let pair = match floats("pair")?.as_slice() {
        [] => None,
        // Z_diff and Z_common are stored for readers of the format; they
        // must be what the modes give.
        [z_even, z_odd, z_diff, z_common, eps_eff_even, eps_eff_odd] => {
            let p = Pair {
                z_even: *z_even,
                z_odd: *z_odd,
                eps_eff_even: *eps_eff_even,
                eps_eff_odd: *eps_eff_odd,
            };
            if p.z_diff().to_bits() != z_diff.to_bits()
                || p.z_common().to_bits() != z_common.to_bits()
            {
                return None;
            }
            Some(p)
        }
        _ => return None,
    };
    if lines.next().is_some() {
        return None;
    }
    Some(Ok(SolvedLine {
        capacitance,
        capacitance_vacuum,
        inductance,
        n,
        modal_eps_eff,
        single,
        pair,
        filling,
        z_rel_error,
        eps_rel_error,
        unknowns,
    }))
}
