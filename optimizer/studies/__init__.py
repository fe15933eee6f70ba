"""Studies layer: what-if study specs, their execution (pool, Dask), finance, tables."""
