//! Unit tests of the claims: outcomes, statuses, sentences and marks.

use super::*;

fn row(test: &str, c: Option<usize>, s: Option<f64>, p: Option<f64>) -> TestRow {
    TestRow {
        target: 0,
        scheme: 0,
        horizon: 1,
        test: test.into(),
        candidate: c,
        versus: Some(0),
        statistic: s,
        p_value: p,
        in_set: None,
        critical_value: None,
        p_lower: p.map(|p| p / 2.0),
        p_upper: p.map(|p| (p * 2.0).min(1.0)),
    }
}

#[test]
fn outcomes_follow_the_sign_and_the_level() {
    // By definition: significant at 5% with the statistic's sign; one
    // forecast cannot be tested whatever the row holds.
    let dm = |s, p| Outcome::of(Some(&row("diebold_mariano", Some(1), s, p)), 10);
    assert_eq!(dm(Some(2.5), Some(0.01)), Outcome::Better(0.01));
    assert_eq!(dm(Some(-2.5), Some(0.01)), Outcome::Worse(0.01));
    assert_eq!(dm(Some(2.5), Some(0.05)), Outcome::NotSignificant(0.05));
    assert_eq!(dm(None, None), Outcome::NotComputed);
    assert_eq!(Outcome::of(None, 10), Outcome::Absent);
    let one = row("diebold_mariano", Some(1), None, None);
    assert_eq!(Outcome::of(Some(&one), 1), Outcome::OneOrigin);
}

fn setting(dm: Outcome, cw: Outcome, search: Search) -> Setting {
    Setting {
        leader_is_benchmark: false,
        relative: Some(0.9),
        dm,
        cw,
        search,
        n: 20,
    }
}

#[test]
fn statuses_follow_their_definitions() {
    use Outcome::*;
    let key = |s: Setting| s.status().key;
    // holds: the snooping test rejects and the leader drives it.
    let holds = Search::Rejects {
        p: 0.01,
        by_leader: true,
    };
    let other = Search::Rejects {
        p: 0.01,
        by_leader: false,
    };
    assert_eq!(key(setting(NotSignificant(0.2), Absent, holds)), "holds");
    // Another candidate drives the rejection: never transferred.
    assert_eq!(key(setting(NotSignificant(0.12), Absent, other)), "ahead");
    assert_eq!(key(setting(Better(0.01), Absent, other)), "alone");
    // Clark–West counts unless Diebold–Mariano finds the leader worse.
    assert_eq!(
        key(setting(NotSignificant(0.3), Better(0.01), Search::Absent)),
        "alone"
    );
    assert_eq!(
        key(setting(Worse(0.01), Better(0.01), Search::Absent)),
        "ahead"
    );
    assert_eq!(key(setting(Absent, Absent, Search::Absent)), "untested");
    assert_eq!(key(setting(NotComputed, Absent, Search::Absent)), "ahead");
    // One origin: no test, no mark; the benchmark first is unbeaten.
    let mut one = setting(OneOrigin, OneOrigin, Search::OneOrigin);
    one.n = 1;
    assert_eq!(one.status(), LEGEND[5]);
    assert_eq!(one.status().symbol, "");
    one.leader_is_benchmark = true;
    assert_eq!(key(one), "unbeaten");
    let mut worse = setting(Better(0.01), Absent, holds);
    worse.relative = Some(1.0);
    assert_eq!(key(worse), "unbeaten");
}

#[test]
fn sentences_name_the_test_the_pair_and_the_p_value() {
    use Outcome::*;
    assert_eq!(
        diebold_mariano(Better(0.01), "ar(1)", "naive").unwrap(),
        "Diebold–Mariano, ar(1) against naive: rejects equal mean squared error, in ar(1)'s favour (p = 0.010)."
    );
    assert_eq!(
        diebold_mariano(NotSignificant(0.295), "ar(1)", "naive").unwrap(),
        "Diebold–Mariano, ar(1) against naive: cannot reject equal mean squared error (p = 0.295)."
    );
    assert!(diebold_mariano(Absent, "a", "b").is_none());
    assert_eq!(
        diebold_mariano(OneOrigin, "a", "b").unwrap(),
        "Diebold–Mariano, a against b: not testable with one origin."
    );
    // Clark–West rejecting while the sample says worse: no improvement.
    let cw = clark_west(Better(0.0004), Worse(0.01), "ar(12)", "naive").unwrap();
    assert!(cw.starts_with("Clark–West, ar(12) against naive (nested in it): rejects equal population MSPE (p < 0.001), yet ar(12) forecast significantly worse"));
    assert!(!cw.contains("favour") && !cw.contains("improv"));
    assert_eq!(
        clark_west(NotSignificant(0.2), NotSignificant(0.3), "ar(1)", "naive").unwrap(),
        "Clark–West, ar(1) against naive (nested in it): cannot reject equal population MSPE (p = 0.200)."
    );
}

#[test]
fn the_snooping_sentence_names_the_candidate_that_drives_it() {
    let ids: Vec<String> = ["naive", "ar(1)", "ardl(2,1)"].map(String::from).to_vec();
    let r = row("snooping", Some(2), Some(1.58), Some(0.02));
    let s = snooping(&r, Search::of(Some(&r), 20, 1), &ids, "naive", Some(1), 2);
    assert_eq!(
        s,
        "Snooping test (Hansen's SPA) over the 2 other candidates: rejects that none beats naive \
         (consistent p = 0.020; lower 0.010, upper 0.040); ardl(2,1) drives it (studentised gain 1.58), \
         not the leader ar(1): the test says nothing about ar(1) on its own."
    );
    let s = snooping(&r, Search::of(Some(&r), 20, 2), &ids, "naive", Some(2), 2);
    assert!(s.ends_with("ardl(2,1) drives it (studentised gain 1.58), the leader itself."));
    let r = row("snooping", Some(2), Some(0.9), Some(0.6));
    let s = snooping(&r, Search::of(Some(&r), 20, 1), &ids, "naive", Some(1), 2);
    assert!(s.contains(
        "cannot reject that none beats naive (consistent p = 0.600; lower 0.300, upper 1.000)"
    ));
    assert_eq!(
        snooping(&r, Search::of(Some(&r), 1, 1), &ids, "naive", Some(1), 2),
        "Snooping test (Hansen's SPA) over the 2 other candidates: not testable with one origin."
    );
}

#[test]
fn marks_follow_the_tests_and_vanish_with_one_origin() {
    use Outcome::*;
    assert_eq!(
        marks(Better(0.01), Absent, Some(true), 10),
        ("▲".into(), true)
    );
    assert_eq!(
        marks(Worse(0.01), Better(0.01), None, 10),
        ("▼†".into(), false)
    );
    assert_eq!(
        marks(OneOrigin, OneOrigin, Some(true), 1),
        (String::new(), false)
    );
    assert_eq!(candidates(1), "1 candidate");
    assert_eq!(candidates(0), "0 candidates");
}

/// A seeded generator of outcome tables (xorshift64*; no test data is
/// invented: the rows are arbitrary, the property is by construction).
struct Draw(u64);

impl Draw {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
    fn below(&mut self, n: u64) -> u64 {
        self.next() % n
    }
    /// p-values that straddle the level and its rounding, and None.
    fn p(&mut self) -> Option<f64> {
        const NEAR: [f64; 9] = [0.0, 0.0004, 0.01, 0.0495, 0.04999, 0.05, 0.0501, 0.2, 1.0];
        match self.below(4) {
            0 => None,
            1 => Some(NEAR[self.below(NEAR.len() as u64) as usize]),
            _ => Some((self.next() >> 11) as f64 / (1u64 << 53) as f64),
        }
    }
    fn stat(&mut self) -> Option<f64> {
        match self.below(5) {
            0 => None,
            1 => Some(0.0),
            _ => Some(((self.next() >> 11) as f64 / (1u64 << 53) as f64 - 0.5) * 8.0),
        }
    }
    fn row(&mut self, test: &str, candidate: Option<usize>) -> Option<TestRow> {
        (self.below(5) > 0).then(|| {
            let (s, p) = (self.stat(), self.p());
            let mut r = row(test, candidate, s, p);
            r.p_lower = self.p();
            r.p_upper = self.p();
            r
        })
    }
}

/// Significant in the direction `sign` by the row itself.
fn shows(r: Option<&TestRow>, n: usize, sign: f64) -> bool {
    n >= 2
        && matches!(r, Some(TestRow { statistic: Some(s), p_value: Some(p), .. })
            if *p < LEVEL && s * sign > 0.0)
}

/// Property: over generated outcome tables, no sentence, status or mark
/// claims significance that its tests.csv row does not show; every
/// sentence quotes the row's p-value; one forecast is never tested; a
/// Clark–West rejection is never called an improvement.
#[test]
fn no_claim_without_its_row() {
    let ids: Vec<String> = ["naive", "ar(1)", "ar(2)", "ardl(1,1)"]
        .map(String::from)
        .to_vec();
    let mut d = Draw(0x9E37_79B9_7F4A_7C15);
    for case in 0..20_000 {
        let n = [1, 2, 20][d.below(3) as usize];
        let leader = 1 + d.below(3) as usize;
        let driver = 1 + d.below(3) as usize;
        let dm_row = d.row("diebold_mariano", Some(leader));
        let cw_row = d.row("clark_west", Some(leader));
        let sn_row = d.row("snooping", Some(driver));
        let (dm, cw) = (
            Outcome::of(dm_row.as_ref(), n),
            Outcome::of(cw_row.as_ref(), n),
        );
        let search = Search::of(sn_row.as_ref(), n, leader);
        let setting = Setting {
            leader_is_benchmark: false,
            relative: Some(0.9),
            dm,
            cw,
            search,
            n,
        };
        let ctx = format!("case {case}: n {n} dm {dm_row:?} cw {cw_row:?} sn {sn_row:?}");
        let (id, bench) = (&ids[leader], &ids[0]);
        let dm_better = shows(dm_row.as_ref(), n, 1.0);
        let dm_worse = shows(dm_row.as_ref(), n, -1.0);
        let cw_better = shows(cw_row.as_ref(), n, 1.0);
        // Diebold–Mariano.
        if let Some(text) = diebold_mariano(dm, id, bench) {
            let r = dm_row.as_ref().expect("a sentence needs a row");
            let rejects = text.contains(": rejects");
            assert_eq!(rejects, dm_better || dm_worse, "{ctx}: {text}");
            assert_eq!(text.contains("favour"), dm_better, "{ctx}: {text}");
            assert_eq!(
                text.contains("significantly worse"),
                dm_worse,
                "{ctx}: {text}"
            );
            if n >= 2 && r.p_value.is_some() {
                assert!(text.contains(&p_is(r.p_value)), "{ctx}: {text}");
            }
            assert_eq!(text.contains("one origin"), n < 2, "{ctx}: {text}");
        }
        // Clark–West.
        if let Some(text) = clark_west(cw, dm, id, bench) {
            let r = cw_row.as_ref().expect("a sentence needs a row");
            assert!(!text.contains("improv"), "{ctx}: {text}");
            let rejects = text.contains(": rejects");
            assert_eq!(rejects, cw_better, "{ctx}: {text}");
            if text.contains("favour") {
                assert!(cw_better && !dm_worse, "{ctx}: {text}");
            }
            if n >= 2 && r.p_value.is_some() {
                assert!(text.contains(&p_is(r.p_value)), "{ctx}: {text}");
            }
            assert_eq!(text.contains("one origin"), n < 2, "{ctx}: {text}");
        }
        // Snooping.
        if let Some(r) = sn_row.as_ref() {
            let text = snooping(r, search, &ids, bench, Some(leader), 3);
            let rejects = text.contains(": rejects");
            assert_eq!(
                rejects,
                n >= 2 && r.p_value.is_some_and(|p| p < LEVEL),
                "{ctx}: {text}"
            );
            if rejects {
                assert!(
                    text.contains(&format!("{} drives it", ids[driver])),
                    "{ctx}: {text}"
                );
                assert_eq!(
                    text.contains("the leader itself"),
                    driver == leader,
                    "{ctx}: {text}"
                );
            }
            if n >= 2 && r.p_value.is_some() {
                assert!(
                    text.contains(&format!("consistent {}", p_is(r.p_value))),
                    "{ctx}: {text}"
                );
                assert!(
                    text.contains(&format!("lower {}", pval(r.p_lower))),
                    "{ctx}: {text}"
                );
            }
            assert_eq!(text.contains("one origin"), n < 2, "{ctx}: {text}");
        }
        // The status and the marks.
        let status = setting.status();
        match status.key {
            "holds" => assert!(
                n >= 2
                    && driver == leader
                    && sn_row
                        .as_ref()
                        .and_then(|r| r.p_value)
                        .is_some_and(|p| p < LEVEL),
                "{ctx}: holds"
            ),
            "alone" => assert!(dm_better || (cw_better && !dm_worse), "{ctx}: alone"),
            "one_origin" => assert!(n < 2),
            _ => {}
        }
        let (m, in_set) = marks(dm, cw, Some(true), n);
        assert_eq!(m.contains('▲'), dm_better, "{ctx}: {m}");
        assert_eq!(m.contains('▼'), dm_worse, "{ctx}: {m}");
        assert_eq!(m.contains('†'), cw_better, "{ctx}: {m}");
        assert_eq!(in_set, n >= 2, "{ctx}");
    }
}
