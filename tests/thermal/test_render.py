def test_condensation_masks_leave_a_pixel_above_the_formula_range_out():
    """A 150 °C flue pixel in a wall picture is in neither mask instead of refusing the image."""
    import numpy as np

    from survey.thermal.drawing import condensation_masks

    # Expected masks from the definition (ISO 13788: mould at surface RH >= 80 %, condensation
    # at >= 100 %); 20 °C / 50 % air makes a 5 °C surface condense (docs/references.md § Psychrometrics).
    mould, wet = condensation_masks(np.array([150.0, 20.0, 5.0]), 20.0, 50.0)
    assert mould.tolist() == [False, False, True]
    assert wet.tolist() == [False, False, True]
