//! Integration tests of the Touchstone reader and writer.
use lcgate::touchstone::*;

#[test]
fn smoke() {
    let t = read_bytes("a.s1p", b"# MHz S MA R 50\n2.000 0.894 -12.136\n").unwrap();
    assert_eq!(t.network.freq, vec![2e6]);
    let s = t.network.s[0];
    assert!((s.re - 0.874020294860635).abs() < 1e-12 && (s.im + 0.18794819544685323).abs() < 1e-12);
    let w = write_string(&t.network, &WriteOptions::default());
    let back = read_bytes("b.s1p", w.as_bytes()).unwrap();
    assert_eq!(back.network.s, t.network.s);
}
