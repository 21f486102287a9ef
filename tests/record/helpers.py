"""Helpers that build record data through the public write path."""

from __future__ import annotations

from projects.record import writes


def add_contexts(project, actor, labels, kind="deposit", area="A"):
    return {label: writes.add_context(project, actor, label=label, kind=kind, area=area).object for label in labels}


def relate(project, actor, subject, type_, obj, **extra):
    return writes.add_relationship(project, actor, subject=subject, type=type_, object=obj, **extra).object
