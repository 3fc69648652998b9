"""Agencies and hazard policies: add from TOML/JSON, look up the policy that applies to a spot."""

from __future__ import annotations

from pathlib import Path

from sqlalchemy import select
from sqlalchemy.orm import Session

from app.db.tables import Agency, HazardPolicy
from app.errors import BadInput, NotFound
from app.schemas.agencies import AgencyConfig, AgencyPublic, PolicySpec
from app.schemas.toml import load_toml_model
from models.errors import InvalidInput
from models.hazard import DEFAULT_POLICY
from models.hazard import HazardPolicy as Policy

__all__ = ["add_agency", "agency_public", "get_agency", "list_agencies", "load_agency_toml", "policy_for", "set_policy"]


def load_agency_toml(path: Path | str) -> AgencyConfig:
    return load_toml_model(path, AgencyConfig)


def _checked(spec: PolicySpec, *, name: str, where: str) -> list[dict]:
    levels = [lv.model_dump(exclude_none=True) for lv in spec.levels]
    for lv in levels:
        if not lv.get("rules"):
            lv.pop("rules", None)  # stored as before when a level has no rules
    data = {"name": name, "combine": spec.combine, "basis": spec.basis, "levels": levels}
    try:
        Policy.from_mapping(data)  # nested thresholds, level order, labels
    except InvalidInput as exc:
        raise BadInput(f"{where}: {exc}", field=where) from exc
    return [dict(d, combine=spec.combine, basis=spec.basis) if i == 0 else d for i, d in enumerate(data["levels"])]


def set_policy(session: Session, agency_id: str, spec: PolicySpec, *, spot_id: str = "") -> None:
    where = f"policy for {spot_id}" if spot_id else "policy"
    levels = _checked(spec, name=f"{agency_id} {spot_id or 'default'}", where=where)
    row = session.scalars(
        select(HazardPolicy).where(HazardPolicy.agency_id == agency_id, HazardPolicy.spot_key == spot_id)
    ).first()
    if row is None:
        session.add(HazardPolicy(agency_id=agency_id, spot_key=spot_id, levels=levels))
    else:
        row.levels = levels
    session.flush()


def add_agency(session: Session, config: AgencyConfig) -> Agency:
    """Add or replace an agency with its policies (all checked before anything is written)."""
    if config.policy is not None:
        _checked(config.policy, name=config.id, where="policy")
    for sp in config.spot_policies:
        _checked(sp, name=f"{config.id} {sp.spot}", where=f"spot_policies[{sp.spot}]")
    agency = session.get(Agency, config.id)
    if agency is None:
        agency = Agency(id=config.id)
        session.add(agency)
    agency.name = config.name
    agency.spots = list(config.spots)
    agency.alert_level = config.alert_level
    agency.contact = config.contact
    for row in session.scalars(select(HazardPolicy).where(HazardPolicy.agency_id == config.id)):
        session.delete(row)
    session.flush()
    if config.policy is not None:
        set_policy(session, config.id, config.policy)
    for sp in config.spot_policies:
        set_policy(session, config.id, PolicySpec(combine=sp.combine, basis=sp.basis, levels=sp.levels), spot_id=sp.spot)
    return agency


def get_agency(session: Session, agency_id: str) -> Agency:
    agency = session.get(Agency, agency_id)
    if agency is None:
        raise NotFound(f"no agency with id {agency_id!r}")
    return agency


def list_agencies(session: Session) -> list[Agency]:
    return list(session.scalars(select(Agency).order_by(Agency.id)))


def _policy_from_row(row: HazardPolicy, name: str) -> Policy:
    levels = [{k: v for k, v in lv.items() if k not in ("combine", "basis")} for lv in row.levels]
    combine = row.levels[0].get("combine", "any") if row.levels else "any"
    basis = row.levels[0].get("basis", "nearshore") if row.levels else "nearshore"
    return Policy.from_mapping({"name": name, "combine": combine, "basis": basis, "levels": levels})


def policy_for(session: Session, agency_id: str | None, spot_id: str) -> Policy:
    """The spot's own policy, else the agency's default, else shoalcast's labelled default."""
    if agency_id is None:
        return DEFAULT_POLICY
    rows = {
        r.spot_key: r
        for r in session.scalars(
            select(HazardPolicy).where(HazardPolicy.agency_id == agency_id, HazardPolicy.spot_key.in_([spot_id, ""]))
        )
    }
    if spot_id in rows:
        return _policy_from_row(rows[spot_id], f"{agency_id} / {spot_id}")
    if "" in rows:
        return _policy_from_row(rows[""], f"{agency_id} default")
    return DEFAULT_POLICY


def agency_public(session: Session, agency: Agency) -> AgencyPublic:
    policies = {}
    for row in session.scalars(select(HazardPolicy).where(HazardPolicy.agency_id == agency.id)):
        levels = [{k: v for k, v in lv.items() if k not in ("combine", "basis")} for lv in row.levels]
        combine = row.levels[0].get("combine", "any") if row.levels else "any"
        basis = row.levels[0].get("basis", "nearshore") if row.levels else "nearshore"
        policies[row.spot_key] = PolicySpec(combine=combine, basis=basis, levels=levels)
    return AgencyPublic(
        id=agency.id,
        name=agency.name,
        spots=list(agency.spots),
        alert_level=agency.alert_level,
        contact=agency.contact,
        policies=policies,
        updated_at=agency.updated_at,
    )
