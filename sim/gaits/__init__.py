"""Gait building blocks behind the segment controllers of :mod:`sim.gait`.

    base        - measured state, controller base class, nominal stance
    footpath    - phase clock, swing curve, foot placement
    load        - static force distribution over the stance feet and its joint torques
    posture     - stand-up, sit-down and lying controllers
    locomotion  - walk and trot controller

All of it is pure numpy: nothing here touches the engine.
"""
