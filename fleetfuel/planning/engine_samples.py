"""The fuel samples and bulk-tank inputs the engine reads, as services/ take them: the same
for every unit of a batch, so read once a batch (kept on the batch)."""

from __future__ import annotations

from fleetfuel.fleet.models import FuelSource
from services import fuel_intake as fi
from services import fuel_quality as fq

from . import engine_tank
from .rows import FuelSampleRow
from .selectors import BatchInputs


def batch_source_fuel(batch: BatchInputs) -> engine_tank.BatchSources:
    """The batch's source samples as services read them, and each source's tank inputs:
    the same for every unit of the batch, so read once (kept on the batch)."""
    if batch.source_fuel is None:
        samples, refused = samples_read(batch.source_samples, batch)
        batch.source_fuel = engine_tank.BatchSources(samples, refused, source_fuels(batch, samples))
    return batch.source_fuel


def samples_read(
    rows: list[FuelSampleRow], batch: BatchInputs
) -> tuple[list[fi.Sample], list[str]]:
    """Samples as services/ take them, and the ones they refuse, each with its reason."""
    samples: list[fi.Sample] = []
    refused: list[str] = []
    for s in rows:
        source = batch.sources[s.source_id] if s.source_id else None
        try:
            quality = sample_quality(s, source)
        except ValueError as exc:
            refused.append(f"sample {s.reference} left out: {exc}")
            continue
        samples.append(fi.Sample(at=s.sampled_at, source_id=s.source_id,
                                 unit_sample=s.unit_id is not None, quality=quality))  # fmt: skip
    return samples, refused


def source_fuels(batch: BatchInputs, samples: list[fi.Sample]) -> dict[int, engine_tank.SourceFuel]:
    """Each source's deliveries and samples, for its tank model."""
    out: dict[int, engine_tank.SourceFuel] = {}
    for d in batch.deliveries:
        words = f"the {d.litres:,.0f} L delivery on {d.delivered_at:%Y-%m-%d}" + (
            f" (ticket {d.ticket})" if d.ticket else ""
        )
        out.setdefault(d.source_id, engine_tank.SourceFuel([], []))
        out[d.source_id].deliveries.append((d.delivered_at, d.litres, words))
    for s in samples:
        if not s.unit_sample and s.source_id in out:
            out[s.source_id].samples.append(s)
    return out


def sample_quality(sample: FuelSampleRow, source: FuelSource | None) -> fq.FuelQuality:
    """The sample as services read it; the source's FAME and density where it has none."""
    where = f"of {source.name}" if source else "from the unit's tank"
    codes = (
        (sample.code_4, sample.code_6, sample.code_14)
        if sample.code_6 is not None and sample.code_14 is not None
        else None
    )
    counts = (
        (sample.count_4_per_ml, sample.count_6_per_ml, sample.count_14_per_ml)
        if sample.count_6_per_ml is not None and sample.count_14_per_ml is not None
        else None
    )
    shown = sample.iso4406 or "no particle code"
    water_txt = f", water {sample.water_mg_kg:.0f} mg/kg" if sample.water_mg_kg is not None else ""
    fame = sample.fame_pct_v
    if fame is None and source is not None:
        fame = source.fame_pct_v
    return fq.FuelQuality(
        codes=codes,  # type: ignore[arg-type]
        counts_per_ml=counts,  # type: ignore[arg-type]
        water_mg_kg=sample.water_mg_kg,
        fame_pct_v=fame,
        temperature_c=sample.temperature_c,
        label=f"sample {sample.reference} {where}, {sample.sampled_at:%Y-%m-%d}: "
        f"{shown}{water_txt}",
        marks=(sample.mark_4, sample.mark_6, sample.mark_14),
        density_kg_l=source.density_kg_l if source is not None else None,
    )
