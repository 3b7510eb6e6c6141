//! Unit tests of the shard split and merge.

use super::*;

#[test]
fn blocks_partition_the_points_and_differ_by_at_most_one() {
    for total in [1usize, 2, 7, 10, 1000, 1001] {
        for n in 1..=total.min(13) {
            let mut next = 0;
            let mut sizes = Vec::new();
            for k in 1..=n {
                let r = Shard { index: k, count: n }.range(total).unwrap_or(0..0);
                assert_eq!(r.start, next, "total {total}, shard {k}/{n}");
                next = r.end;
                sizes.push(r.len());
            }
            assert_eq!(next, total);
            let (lo, hi) = (sizes.iter().min(), sizes.iter().max());
            assert!(hi.zip(lo).is_some_and(|(h, l)| h - l <= 1), "{sizes:?}");
        }
    }
    assert!(Shard { index: 1, count: 5 }.range(4).is_err());
}

#[test]
fn parse_rejects_malformed_shards() {
    for bad in ["", "3", "1/0", "0/3", "4/3", "a/3", "1/b", "-1/3", "1/3/5"] {
        assert!(Shard::parse(bad).is_err(), "{bad} accepted");
    }
    assert_eq!(
        Shard::parse(" 7 / 9 ").ok(),
        Some(Shard { index: 7, count: 9 })
    );
    assert_eq!(
        Shard::parse("2/5").map(|s| s.to_string()).ok(),
        Some("2/5".into())
    );
}

#[test]
fn shard_header_round_trips_through_json_and_prints_its_line() {
    let h = ShardHeader {
        shard: Shard { index: 2, count: 3 },
        total_points: 10,
        group_by: vec!["sector".into(), "rank".into()],
        keep: Some(KeepGroups {
            column: "energy_meV".into(),
            lo: -0.1,
            hi: 2.5e-7,
        }),
    };
    assert_eq!(
        h.line(),
        "shard 2/3: points 4-6 of 10; rows grouped by sector,rank; keep groups with energy_meV in [-0.1, 0.00000025]"
    );
    let json = serde_json::to_string(&h).unwrap_or_default();
    let back: Option<ShardHeader> = serde_json::from_str(&json).ok();
    assert_eq!(back, Some(h));
}

#[test]
fn a_table_with_a_comment_line_is_refused() {
    // shard tables carry no `#` line since the metadata moved to the sidecar
    let h = ShardHeader::new(Shard::WHOLE, 1);
    let t = ShardTable::new("old.csv", h, "# old header\nfield_T,energy_meV\n1e0,2e0\n");
    match merge(&[t]) {
        Ok(_) => panic!("a table with a `#` line was merged"),
        Err(e) => assert!(e.to_string().contains("old.csv:1"), "{e}"),
    }
}

#[test]
fn integer_keys_sort_numerically() {
    let mut v = ["0:10", "0:9", "-1", "1:-2", "x"].map(key_part).to_vec();
    v.sort();
    assert_eq!(v, ["-1", "0:9", "0:10", "1:-2", "x"].map(key_part).to_vec());
}
