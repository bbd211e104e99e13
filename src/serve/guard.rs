//! Who may talk to the server: requests must name the address served in `Host` (a page on
//! another site cannot reach it through a DNS name that points at this machine), and a request
//! that changes or computes anything must not come from another origin. Save also needs the
//! random token of this run, which only the page served here carries.

use std::net::IpAddr;

/// The hosts a request may name, for one address and port.
#[derive(Debug, Clone)]
pub struct Hosts {
    pub port: u16,
    /// Served on a loopback address only (the default): `127.0.0.1`, `localhost`, `[::1]`.
    /// Otherwise (`--listen`) any IP address with the port is accepted too, never a DNS name
    /// but `localhost`.
    pub loopback_only: bool,
}

impl Hosts {
    /// Whether a `Host` header value names this server.
    pub fn allows(&self, host: &str) -> bool {
        let Some((name, port)) = host.rsplit_once(':') else {
            return false;
        };
        if port.parse::<u16>().ok() != Some(self.port) {
            return false;
        }
        let bare = name.trim_start_matches('[').trim_end_matches(']');
        match bare.parse::<IpAddr>() {
            Ok(ip) => ip.is_loopback() || !self.loopback_only,
            Err(_) => name.eq_ignore_ascii_case("localhost"),
        }
    }

    /// Whether an `Origin` header value is this server's own page.
    pub fn allows_origin(&self, origin: &str) -> bool {
        origin
            .strip_prefix("http://")
            .is_some_and(|host| !host.contains('/') && self.allows(host))
    }
}

/// A fresh random token for this run of the server (128 bits, hex).
pub fn token() -> String {
    let mut bytes = [0u8; 16];
    // The OS generator; on the rare machine without one, the time and process id (the token
    // only guards Save against pages of other origins, which cannot read it in either case).
    if getrandom::fill(&mut bytes).is_err() {
        let t = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_nanos())
            ^ u128::from(std::process::id()) << 64;
        bytes = t.to_le_bytes();
    }
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

/// Compare two tokens in time independent of where they differ.
pub fn same_token(a: &str, b: &str) -> bool {
    a.len() == b.len()
        && a.bytes()
            .zip(b.bytes())
            .fold(0u8, |acc, (x, y)| acc | (x ^ y))
            == 0
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn only_the_served_address_and_port_are_hosts() {
        let h = Hosts {
            port: 7413,
            loopback_only: true,
        };
        for ok in [
            "127.0.0.1:7413",
            "localhost:7413",
            "[::1]:7413",
            "LOCALHOST:7413",
        ] {
            assert!(h.allows(ok), "{ok}");
        }
        for bad in [
            "127.0.0.1:80",
            "evil.example:7413",
            "127.0.0.1.evil.example:7413",
            "192.168.1.5:7413",
            "127.0.0.1",
            "",
        ] {
            assert!(!h.allows(bad), "{bad}");
        }
        let wide = Hosts {
            port: 7413,
            loopback_only: false,
        };
        assert!(wide.allows("192.168.1.5:7413"));
        assert!(!wide.allows("rebind.example:7413"));
    }

    #[test]
    fn an_origin_must_be_this_page() {
        let h = Hosts {
            port: 7413,
            loopback_only: true,
        };
        assert!(h.allows_origin("http://127.0.0.1:7413"));
        assert!(!h.allows_origin("http://evil.example:7413"));
        assert!(!h.allows_origin("null"));
        assert!(!h.allows_origin("https://127.0.0.1:7413"));
    }

    #[test]
    fn tokens_are_fresh_and_compared_whole() {
        let (a, b) = (token(), token());
        assert_eq!(a.len(), 32);
        assert_ne!(a, b);
        assert!(same_token(&a, &a.clone()));
        assert!(!same_token(&a, &b) && !same_token(&a, &a[..31]));
    }
}
