"""The record as JSON-LD, parsed back with rdflib and queried with SPARQL.

Specifications checked: JSON-LD 1.1 (W3C Recommendation, 2020) — the
document parses with its ``@context``; CIDOC CRM (ISO 21127) with its
archaeological extension CRMarchaeo — every physical relationship joins two
``A8_Stratigraphic_Unit`` nodes through ``AP11_has_physical_relation`` with
a type (``AP11.1_has_type``); W3C PROV-O (Recommendation, 30 April 2013) —
every run is a ``prov:Activity`` with ``prov:used`` and
``prov:wasAssociatedWith``, and who recorded what with which device.
"""

from __future__ import annotations

import json

import pytest
from rdflib import Graph

from projects.models import Relationship, Role

PREFIXES = """
PREFIX rdf: <http://www.w3.org/1999/02/22-rdf-syntax-ns#>
PREFIX rdfs: <http://www.w3.org/2000/01/rdf-schema#>
PREFIX prov: <http://www.w3.org/ns/prov#>
PREFIX crmarchaeo: <http://www.cidoc-crm.org/extensions/crmarchaeo/>
"""


def _graph(client) -> tuple[Graph, dict]:
    response = client.get("/api/v1/projects/VML24/package.jsonld")
    assert response.status_code == 200 and response["Content-Type"].startswith("application/ld+json")
    body = response.content.decode()
    return Graph().parse(data=body, format="json-ld"), json.loads(body)


def _ask(graph: Graph, query: str) -> list:
    return list(graph.query(PREFIXES + query))


@pytest.mark.django_db
def test_every_physical_relationship_joins_two_stratigraphic_units_with_a_crmarchaeo_type(full_site, project,
                                                                                         client_for):
    graph, _doc = _graph(client_for(Role.VIEWER))
    statements = _ask(graph, """SELECT ?r WHERE { ?r a rdf:Statement ;
        rdf:predicate crmarchaeo:AP11_has_physical_relation }""")
    broken = _ask(graph, """SELECT ?r WHERE { ?r a rdf:Statement . FILTER NOT EXISTS {
        ?r rdf:predicate ?p ; rdf:subject ?a ; rdf:object ?b ; <http://www.cidoc-crm.org/extensions/crmarchaeo/AP11.1_has_type> ?t .
        ?a a crmarchaeo:A8_Stratigraphic_Unit . ?b a crmarchaeo:A8_Stratigraphic_Unit .
        FILTER(STRSTARTS(STR(?p), "http://www.cidoc-crm.org/extensions/crmarchaeo/")) } }""")
    assert len(statements) == Relationship.objects.filter(project=project).count()
    assert broken == []


@pytest.mark.django_db
def test_every_run_is_a_prov_activity_using_a_version_a_revision_and_a_curve(full_site, client_for):
    graph, _doc = _graph(client_for(Role.VIEWER))
    runs = _ask(graph, """SELECT ?run WHERE { ?run a prov:Activity ; prov:wasAssociatedWith ?who ;
        prov:used ?version, ?record, ?curve .
        ?version rdfs:label ?vl . ?record rdfs:label ?rl . ?curve <http://purl.org/dc/terms/license> ?licence .
        ?results prov:wasGeneratedBy ?run . ?results rdfs:comment ?caution .
        FILTER(CONTAINS(?vl, "Two phases v1")) FILTER(STRSTARTS(?rl, "the record at revision"))
        FILTER(CONTAINS(?caution, "qualified specialist")) }""")
    assert {row.run for row in runs} == {row.run for row in _ask(
        graph, "SELECT ?run WHERE { ?run a prov:Activity ; rdfs:label ?l FILTER(STRSTARTS(?l, 'model run')) }")}
    assert len({row.run for row in runs}) == 1


@pytest.mark.django_db
def test_the_graph_says_who_recorded_each_unit_with_which_device(full_site, client_for):
    graph, _doc = _graph(client_for(Role.VIEWER))
    rows = _ask(graph, """SELECT ?person ?device WHERE { ?unit a crmarchaeo:A8_Stratigraphic_Unit ; rdfs:label "1002" ;
        prov:wasGeneratedBy ?revision . ?revision prov:wasAssociatedWith ?p, ?d .
        ?p a prov:Person ; rdfs:label ?person . ?d prov:actedOnBehalfOf ?p ; rdfs:label ?device }""")
    assert [(str(r.person), str(r.device)) for r in rows] == [("ada.recorder", "trench tablet")]


@pytest.mark.django_db
def test_the_document_uses_the_published_context(full_site, client_for):
    client = client_for(Role.VIEWER)
    _graph_, doc = _graph(client)
    published = client.get("/api/v1/schemas/linked-data-context/").json()
    assert doc["@context"] == published["@context"]
