//! The mode map's grid and the traced boundary's outcome count.

use super::*;

fn across() -> Vary {
    let s = crate::scenario::template();
    Vary::parse("supply.voltage_v=10:14:3", &s).unwrap()
}

#[test]
fn the_mode_map_spans_the_bracket_times_the_traced_values() {
    let g = mode_map_grid("inductor.inductance_h", 1e-5, 4e-5, 4, &across()).unwrap();
    assert_eq!(g.shape(), [4, 3]);
    let a = &g.axes[0];
    assert_eq!(a.path, "inductor.inductance_h");
    // Evenly spaced, ends included: 10, 20, 30, 40 µH.
    for (v, want) in a.values.iter().zip([1e-5, 2e-5, 3e-5, 4e-5]) {
        assert!((v - want).abs() < 1e-18, "{v}");
    }
    assert_eq!(a.resolved, "inductor.inductance_h=1e-5:4e-5:4");
    assert_eq!(g.axes[1], across());
    // Fewer than two points still gives both ends.
    let g = mode_map_grid("inductor.inductance_h", 1e-5, 4e-5, 0, &across()).unwrap();
    assert_eq!(g.axes[0].values.len(), 2);
    let max = crate::study::vary::MAX_POINTS_PER_AXIS;
    match mode_map_grid("inductor.inductance_h", 1e-5, 4e-5, max + 1, &across()) {
        Err(StudyError::MapTooLarge { points, max: m }) => assert_eq!((points, m), (max + 1, max)),
        r => panic!("{r:?}"),
    }
}

#[test]
fn a_traced_boundary_counts_failures_and_time_outs() {
    let curve = vec![
        (10.0, Err(StudyError::TimeLimit("stopped".into()))),
        (
            12.0,
            Err(StudyError::Boundary {
                path: "x".into(),
                reason: "no crossing".into(),
            }),
        ),
    ];
    assert_eq!(
        CurveCount::of(&curve),
        CurveCount {
            values: 2,
            failed: 2,
            out_of_time: 1
        }
    );
    let v = curve_value("inductor.inductance_h", "supply.voltage_v", &curve);
    assert_eq!(v["points"][1]["across_value"], 12.0);
    assert!(v["points"][1]["error"]
        .as_str()
        .unwrap()
        .contains("no crossing"));
    assert_eq!(v["across"], "supply.voltage_v");
}
