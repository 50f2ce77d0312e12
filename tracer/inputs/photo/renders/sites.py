"""A named set of site-like scenes: invented members on invented grounds, with known truth.

For the site-render tests and the trace-quality and review benchmarks: every member kind, ground,
finish and mark of :mod:`tracer.inputs.photo.renders.synth`'s site look, and the hard cases among
them. All scenes and members are of our own invention.
"""

from __future__ import annotations

from .scene import Scene

__all__ = ["site_scenes"]


def site_scenes() -> list[tuple[str, Scene]]:
    """A named set of site-like scenes (invented members on invented grounds) with known truth.

    Forty-five scenes over every member kind (joist, waney board, log with bark, i-section,
    channel, angle, tee, tube, box, round bar, corroded steel), every ground, finish and mark,
    cast shadows, glints, strongly uneven light, camera tilts up to 10 deg and side faces seen
    from an off-centre camera; on purpose also the hard ones: grey steel on grey concrete, a log
    on grass, timber on wood chips and on decking, a tube on sand, a shadow along the member's
    side. Each has a 9 x 6 checkerboard of 15 mm squares to its left (measure with
    ``target="9x6:15mm"``) and a scale at which the section is at least 600 px across and its
    thinnest wall at least 25 px thick. Deterministic: the same list every call.
    """
    from ....section.shapes import angle, box, channel, i_section, rectangle, round_bar, tee, tube
    from .members import corroded_section, log_section, waney_board

    q = 0.05                                                   # chord angle [rad] of arcs
    joist = rectangle(b=47.0, h=195.0, wane={"top_left": 16.0}, chord_angle=q)
    deep = rectangle(b=75.0, h=225.0, wane={"top_right": [12.0, 30.0]}, chord_angle=q)
    stud = rectangle(b=63.0, h=150.0, chord_angle=q)
    post = rectangle(b=100.0, h=100.0, wane=4.0, chord_angle=q)
    ipe = i_section(h=200.0, b=100.0, tw=5.6, tf=8.5, r=12.0, chord_angle=q)
    heb = i_section(h=200.0, b=200.0, tw=9.0, tf=15.0, r=18.0, chord_angle=q)
    upn = channel(h=152.0, b=76.0, tw=6.4, tf=9.0, r=8.0, chord_angle=q)
    ang = angle(h=150.0, b=90.0, t=10.0, r=12.0, rt=6.0, chord_angle=q)
    eq = angle(h=120.0, b=120.0, t=11.0, r=13.0, rt=6.5, chord_angle=q)
    tsec = tee(h=150.0, b=150.0, tw=10.0, tf=14.0, r=12.0, chord_angle=q)
    chs = tube(d=114.3, t=6.3, chord_angle=q)
    big = tube(d=168.3, t=8.0, chord_angle=q)
    rhs = box(h=200.0, b=100.0, t=8.0, ro=12.0, ri=8.0, chord_angle=q)
    shs = box(h=150.0, b=100.0, t=6.3, ro=9.5, ri=6.3, chord_angle=q)
    bar = round_bar(d=120.0, chord_angle=q)
    flat = rectangle(b=160.0, h=30.0, chord_angle=q)
    log_a = log_section(d=260.0, bark=9.0, tears=2, seed=1)
    log_b = log_section(d=220.0, bark=7.0, wobble=0.05, tears=3, seed=2)
    log_c = log_section(d=300.0, bark=12.0, tears=1, seed=3)
    log_d = log_section(d=240.0, seed=4)                       # debarked
    board_a = waney_board(b=150.0, h=45.0, log_d=300.0, wane=25.0, bark=6.0, offset=20.0, seed=5)
    board_b = waney_board(b=200.0, h=50.0, log_d=380.0, wane=30.0, bark=8.0, offset=-30.0, seed=6)
    board_c = waney_board(b=175.0, h=63.0, log_d=340.0, wane=20.0, bark=0.0, seed=7)
    pitted_ipe = corroded_section(ipe, loss=0.3, pits=14, depth=1.5, size=5.0, where=(0.0, 180.0, 100.0, 200.0), seed=8)
    pitted_upn = corroded_section(upn, loss=0.3, pits=10, depth=1.2, size=6.0, seed=9)
    pitted_ang = corroded_section(ang, loss=0.5, pits=12, depth=2.0, size=5.0, seed=10)
    pitted_chs = corroded_section(chs, loss=0.3, pits=8, depth=1.5, size=4.0, seed=11)
    side = dict(member_length=250.0, camera_shift=(170.0, -40.0))
    st = dict(member="steel")
    specs = [  # name, section (or (section, under bark)), px/mm, scene fields
        ("joist-concrete", joist, 3.4, dict(ground="concrete", checks=2, light=0.3, tilt=4.0, tilt_axis=20.0)),
        ("joist-decking", joist, 3.4, dict(ground="decking", finish="sawn", shadow=25.0, light_from=200.0, tilt=6.0)),
        ("joist-wood-chips", deep, 3.0, dict(ground="wood chips", checks=3, marks=("crayon",), tilt=3.0, tilt_axis=110.0)),
        ("joist-gravel-side", deep, 3.0, dict(ground="gravel", finish="sawn", **side)),
        ("joist-strong-light", joist, 3.4, dict(ground="sand", light=0.55, light_from=30.0, shadow=30.0, tilt=9.5,
                                                tilt_axis=60.0)),
        ("stud-grass", stud, 4.2, dict(ground="grass", marks=("chalk",), shadow=20.0, light_from=150.0)),
        ("stud-dark-floor", stud, 4.2, dict(ground="dark floor", finish="sawn", marks=("paint",), tilt=5.0)),
        ("post-checks-concrete", post, 6.0, dict(ground="concrete", checks=5, pith=(50.0, 52.0), light=0.25)),
        ("post-light-card", post, 6.0, dict(ground="light card", checks=3, pith=(48.0, 55.0), marks=("crayon", "chalk"))),
        ("log-grass", log_a, 2.6, dict(ground="grass", checks=4, shadow=35.0, light_from=120.0)),
        ("log-wood-chips", log_b, 3.0, dict(ground="wood chips", checks=2, tilt=7.0, tilt_axis=150.0)),
        ("log-sand-side", log_c, 2.4, dict(ground="sand", checks=3, member_length=400.0, camera_shift=(250.0, 60.0))),
        ("log-decking", log_b, 3.0, dict(ground="decking", marks=("paint",), light=0.4, light_from=300.0)),
        ("log-gravel-debarked", log_d, 2.8, dict(ground="gravel", checks=6, finish="sawn", shadow=30.0,
                                                 pith=(3.0, -4.0))),
        ("board-gravel", board_a, 4.2, dict(ground="gravel", tilt=5.0, tilt_axis=80.0)),
        ("board-decking", board_b, 3.2, dict(ground="decking", shadow=20.0, light_from=45.0)),
        ("board-grass", board_c, 3.6, dict(ground="grass", finish="sawn", checks=2, tilt=8.0)),
        ("ipe-grey-concrete", ipe, 4.6, dict(ground="concrete", finish="grey", tilt=3.0, **st)),
        ("ipe-mill-scale-gravel-side", ipe, 4.6, dict(ground="gravel", finish="mill scale", **side, **st)),
        ("ipe-bright-glints", ipe, 4.6, dict(ground="concrete", finish="bright", glints=12, light=0.3, **st)),
        ("ipe-chalk-dark-floor", ipe, 4.6, dict(ground="dark floor", finish="grey", marks=("chalk", "chalk"),
                                                tilt=6.0, **st)),
        ("heb-gravel-uneven", heb, 3.2, dict(ground="gravel", finish="rust", light=0.55, light_from=330.0, tilt=10.0,
                                             tilt_axis=45.0, **st)),
        ("heb-light-card", heb, 3.2, dict(ground="light card", finish="mill scale", marks=("crayon",), **st)),
        ("channel-rust-sand", upn, 4.2, dict(ground="sand", finish="rust", shadow=25.0, light_from=160.0, **st)),
        ("channel-shadow-side", upn, 4.2, dict(ground="concrete", finish="grey", shadow=45.0, light_from=180.0,
                                                light=0.3, **st)),
        ("channel-decking-side", upn, 4.2, dict(ground="decking", finish="painted", **side, **st)),
        ("angle-grass", ang, 4.2, dict(ground="grass", finish="rust", tilt=4.0, **st)),
        ("angle-grey-concrete-tilt", ang, 4.2, dict(ground="concrete", finish="grey", tilt=9.0, tilt_axis=130.0,
                                                    glints=5, **st)),
        ("angle-equal-wood-chips", eq, 5.0, dict(ground="wood chips", finish="mill scale", shadow=30.0, **st)),
        ("tee-decking", tsec, 4.2, dict(ground="decking", finish="mill scale", light=0.35, **st)),
        ("tee-paint-concrete", tsec, 4.2, dict(ground="concrete", finish="painted", marks=("paint",), **st)),
        ("tube-sand", chs, 5.4, dict(ground="sand", finish="grey", tilt=5.0, **st)),
        ("tube-concrete-glints", chs, 5.4, dict(ground="concrete", finish="bright", glints=9, shadow=20.0, **st)),
        ("tube-grass-painted", big, 3.8, dict(ground="grass", finish="painted", light=0.3, **st)),
        ("tube-gravel-side", big, 3.8, dict(ground="gravel", finish="rust", **side, **st)),
        ("box-gravel-glints", rhs, 3.3, dict(ground="gravel", finish="grey", glints=8, tilt=6.0, **st)),
        ("box-wood-chips", shs, 4.2, dict(ground="wood chips", finish="rust", shadow=25.0, light_from=100.0, **st)),
        ("box-crayon-light-card", shs, 4.2, dict(ground="light card", finish="grey", marks=("crayon",), light=0.5,
                                                 **st)),
        ("bar-bright-concrete", bar, 5.0, dict(ground="concrete", finish="bright", glints=6, tilt=7.0, **st)),
        ("bar-rust-sand", bar, 5.0, dict(ground="sand", finish="rust", shadow=30.0, **st)),
        ("flat-grey-concrete", flat, 3.8, dict(ground="concrete", finish="grey", light=0.4, **st)),
        ("pitted-ipe-gravel", pitted_ipe, 5.2, dict(ground="gravel", finish="rust", tilt=4.0, **st)),
        ("pitted-channel-concrete", pitted_upn, 5.8, dict(ground="concrete", finish="mill scale", glints=4, **st)),
        ("pitted-angle-grass", pitted_ang, 4.2, dict(ground="grass", finish="rust", shadow=25.0, **st)),
        ("pitted-tube-decking", pitted_chs, 5.4, dict(ground="decking", finish="rust", light=0.35, tilt=6.0, **st)),
    ]
    out = []
    for i, (name, member, ppm, kw) in enumerate(specs):
        sec, wood = member if isinstance(member, tuple) else (member, None)
        wood = None if wood is sec else wood                  # no bark: no wood under it to draw
        x0, y0, x1, y1 = sec.bounds
        dx, dy = -x0, -(y0 + y1) / 2                          # left edge at x = 0, middle at y = 0
        if "pith" in kw:                                      # given in the member's own frame
            kw = dict(kw, pith=(kw["pith"][0] + dx, kw["pith"][1] + dy))
        # The target's paper ends 25 mm left of the member, its middle level with the member's.
        at = (-25.0 - (9 + 0.6) * 15.0, -(6 - 1) / 2 * 15.0)
        scene = Scene(section=sec.translated(dx, dy), under_bark=None if wood is None else wood.translated(dx, dy),
                      target=(9, 6, 15.0), target_at=at, px_per_mm=ppm, margin=35.0, blur=0.9, noise=2.5,
                      seed=1000 + i, jpeg=90, **kw)
        out.append((name, scene))
    return out
