"""Gait building blocks behind the segment controllers of :mod:`sim.scenario.segments`.

    base          - measured state, controller base class, nominal stance
    footpath      - phase clock, swing curve, foot placement
    stance_forces - static force distribution over the stance feet and its joint torques
    posture       - stand-up, sit-down and lying controllers
    locomotion    - walk, trot, bound and pronk controller
    leg_solver    - closed-form leg solver for the four legs
    jump          - the vertical jump segment

All of it is pure numpy: nothing here touches the engine.
"""
