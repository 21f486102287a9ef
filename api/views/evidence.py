"""Dating evidence of a project, calibration and plots, and the calibration curves.

Evidence reads come from ``RecordState`` at the current or any past revision
(``?at=REV``), exactly like the record; writes go through
``chronology.evidence.writes``.  Curves are not project data: they are listed
and imported under ``/api/v1/curves/``, each visible to the organisation that
imported it, or to everyone when global.
"""

from __future__ import annotations

from django.http import HttpResponse
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import exceptions, status, viewsets
from rest_framework.decorators import action
from rest_framework.parsers import FormParser, MultiPartParser
from rest_framework.response import Response
from rest_framework.views import APIView

from api.errors import ApiError
from api.idempotency import idempotent
from api.parsers import BoundedJSONParser
from api.serializers.evidence import (
    CalendarDateInput,
    CalendarDateOut,
    CalibrateInput,
    CurveImportInput,
    CurveOut,
    DeterminationInput,
    DeterminationOut,
    SampleInput,
    SampleOut,
    TerminusInput,
    TerminusOut,
)
from api.serializers.interpretations import JobOut
from api.serializers.record import RetractInput
from api.views.base import DescribedInputMixin, ProjectScopedMixin, ProjectScopedViewSet, truthy
from chronology.engine.curves import curve_to_csv
from chronology.evidence import calibrate, calibrate_request, limits, writes
from chronology.evidence.calibrate_request import measurements_at
from chronology.evidence.curves import curve_summary, engine_curve, import_curve, may_import, resolve_curve
from chronology.evidence.models import Curve
from chronology.evidence.tasks import submit_calibration
from chronology.evidence.representation import DATA_OF
from projects.models import Organisation, RecordState, Role
from projects.record import reads
from api.actor import actor_for
from projects.record.errors import RecordInvalid, RecordNotFound

AT = OpenApiParameter("at", OpenApiTypes.INT, description="Read the evidence as it was at this revision.")
DENSITY = OpenApiParameter("density", OpenApiTypes.BOOL, description="Include the calibrated density.")
STEP = OpenApiParameter("step", OpenApiTypes.NUMBER, description="Calendar grid step in years (default 1).")


def _step(value):
    return limits.grid_step(value)


def sample_codes(project, revision: int, ids) -> dict[int, str]:
    qs = reads.states(project, "sample", revision).filter(object_id__in=list(ids))
    return {object_id: data["code"] for object_id, data in qs.values_list("object_id", "data")}


class _EvidenceViewSet(ProjectScopedViewSet):
    """List, detail (at any revision), create and retract of one evidence kind."""

    kind: str = ""
    input_class = None
    add = None
    filters: dict[str, str] = {}
    throttle_scope: str | None = None  # "heavy" on the calibration and plot actions (api/throttles.py)

    def revision(self) -> int:
        if not hasattr(self, "_revision"):
            self._revision = reads.resolve_revision(self.get_project(), self.request.query_params.get("at"))
        return self._revision

    def get_queryset(self):
        if getattr(self, "swagger_fake_view", False):  # schema generation has no project
            return RecordState.objects.none()
        qs = reads.states(self.get_project(), self.kind, self.revision())
        for param, key in self.filters.items():
            value = self.request.query_params.get(param)
            if value not in (None, ""):
                if "\x00" in value:  # PostgreSQL text cannot hold NUL: refuse rather than fail in the query
                    raise RecordInvalid(f"{param} must not contain NUL characters", field=param, code="invalid")
                if key.endswith("_id"):
                    try:
                        value = int(value)
                    except ValueError:
                        raise RecordInvalid(f"{param} must be an id", field=param, code="invalid-number") from None
                qs = qs.filter(**{f"data__{key}": value})
        return qs

    def rows(self, data: list[dict]) -> list[dict]:
        """Join in context labels and sample codes in force at the revision read."""
        project, revision = self.get_project(), self.revision()
        context_ids = {d["context_id"] for d in data if d.get("context_id") is not None}
        sample_ids = {d["sample_id"] for d in data if d.get("sample_id") is not None}
        labels = reads.context_labels(project, revision, context_ids) if context_ids else {}
        codes = sample_codes(project, revision, sample_ids) if sample_ids else {}
        out = []
        for d in data:
            row = dict(d)
            if "context_id" in d:
                row["context"] = labels.get(d["context_id"], "?")
            if "sample_id" in d:
                row["sample"] = codes.get(d["sample_id"], "?") if d["sample_id"] is not None else None
            out.append(row)
        return out

    def state_of(self, pk) -> dict:
        state = self.get_queryset().filter(object_id=pk).first()
        if state is None:
            raise RecordNotFound(f"no {self.kind.replace('_', ' ')} {pk} at revision {self.revision()}")
        return state.data

    def list(self, request, project=None):
        page = self.paginate_queryset(self.get_queryset())
        response = self.get_paginated_response(self.rows([s.data for s in page]))
        response.data["revision"] = self.revision()
        return response

    def retrieve(self, request, project=None, pk=None):
        return Response(self.rows([self.state_of(pk)])[0])

    def _written(self, obj, revision: int, code=status.HTTP_200_OK, extra: dict | None = None):
        self._revision = revision
        body = self.rows([DATA_OF[self.kind](obj)])[0]
        body.update(extra or {})
        return Response(body, status=code, headers={"X-Record-Revision": str(revision)})

    @idempotent
    def create(self, request, project=None):
        data = self.input_class(data=request.data)
        data.is_valid(raise_exception=True)
        fields = dict(data.validated_data)
        uid = fields.pop("uid", None)
        result = type(self).add(self.get_project(), actor_for(request), uid=uid, **fields)
        code = status.HTTP_201_CREATED if result.created else status.HTTP_200_OK
        return self._written(result.object, result.revision, code)

    @extend_schema(request=RetractInput)
    @action(detail=True, methods=["post"])
    @idempotent
    def retract(self, request, project=None, pk=None):
        data = RetractInput(data=request.data)
        data.is_valid(raise_exception=True)
        result = writes.retract_evidence(self.get_project(), actor_for(request), self.kind, int(pk),
                                         reason=data.validated_data["reason"])
        obj = result.object
        return self._written(obj, result.revision, extra={"retracted_revision": obj.retracted_revision,
                                                          "retraction_reason": obj.retraction_reason})


def _documented(out, inp):
    """Schema decorators for the four standard actions of an evidence viewset."""
    def apply(cls):
        cls.list = extend_schema(parameters=[AT], responses=out(many=True))(cls.list)
        cls.retrieve = extend_schema(parameters=[AT], responses=out)(cls.retrieve)
        cls.create = extend_schema(request=inp, responses={201: out, 200: out})(cls.create)
        return cls
    return apply


def _own(method):
    # Each subclass gets its own function object, so per-class schema decorations do not collide.
    def wrapper(self, *args, **kwargs):
        return method(self, *args, **kwargs)
    wrapper.__name__, wrapper.__doc__ = method.__name__, method.__doc__
    return wrapper


class SampleViewSet(_EvidenceViewSet):
    """Samples taken from contexts."""

    kind = "sample"
    serializer_class = SampleOut  # documents the responses
    input_class = SampleInput
    add = staticmethod(writes.add_sample)
    filters = {"context": "context_id", "code": "code"}
    list, retrieve, create = _own(_EvidenceViewSet.list), _own(_EvidenceViewSet.retrieve), _own(_EvidenceViewSet.create)

    @extend_schema(parameters=[AT, DENSITY, STEP], responses={200: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["get"], throttle_scope="heavy")
    def combination(self, request, project=None, pk=None):
        """Ward & Wilson (1978) combination of the sample's determinations, calibrated if consistent."""
        self.state_of(pk)
        ids = list(reads.states(self.get_project(), "determination", self.revision())
                   .filter(data__sample_id=int(pk)).values_list("object_id", flat=True))
        measurements = measurements_at(self.get_project(), self.revision(), ids)
        body = calibrate.combine_measurements(measurements, _step(request.query_params.get("step")),
                                              density=truthy(request.query_params.get("density")))
        body.update(sample_id=int(pk), revision=self.revision())
        return Response(body)


class DeterminationViewSet(_EvidenceViewSet):
    """Radiocarbon determinations on samples, with their calibration and plot."""

    kind = "determination"
    serializer_class = DeterminationOut  # documents the responses
    input_class = DeterminationInput
    add = staticmethod(writes.add_determination)
    filters = {"sample": "sample_id", "lab_code": "lab_code", "curve": "curve_id"}
    list, retrieve, create = _own(_EvidenceViewSet.list), _own(_EvidenceViewSet.retrieve), _own(_EvidenceViewSet.create)

    def _measurement(self, pk) -> calibrate.Measurement:
        self.state_of(pk)
        return measurements_at(self.get_project(), self.revision(), [int(pk)])[0]

    @extend_schema(parameters=[AT, DENSITY, STEP], responses={200: OpenApiTypes.OBJECT})
    @action(detail=True, methods=["get"], throttle_scope="heavy")
    def calibration(self, request, project=None, pk=None):
        """The calibrated date: HPD ranges at 68.3% and 95.4%, median, curve and cautions."""
        m = self._measurement(pk)
        step = _step(request.query_params.get("step"))
        (date, curve), = calibrate.calibrate_measurements([m], step)
        body = calibrate.summarise(m, date, curve, density=truthy(request.query_params.get("density")))
        body["revision"] = self.revision()
        return Response(body)

    @extend_schema(parameters=[AT, STEP, OpenApiParameter("image", OpenApiTypes.STR, enum=["svg", "png"])],
                   responses={(200, "image/svg+xml"): OpenApiTypes.BINARY, (200, "image/png"): OpenApiTypes.BINARY})
    @action(detail=True, methods=["get"], throttle_scope="heavy")
    def plot(self, request, project=None, pk=None):
        """The calibrated date drawn against its curve, as SVG (default) or PNG (``?image=png``)."""
        image = request.query_params.get("image", "svg")
        if image not in ("svg", "png"):
            raise RecordInvalid("image must be 'svg' or 'png'", field="image", code="invalid-choice")
        m = self._measurement(pk)
        sample = self.rows([self.state_of(pk)])[0]["sample"]
        images = calibrate.plot_measurement(m, _step(request.query_params.get("step")),
                                            title=f"{m.label} (sample {sample}): {m.cra:.0f} ± {m.sigma:.0f} BP")
        if image == "png":
            return HttpResponse(images.png, content_type="image/png")
        return HttpResponse(images.svg, content_type="image/svg+xml")


class CalendarDateViewSet(_EvidenceViewSet):
    """Calendar dates (tree-ring, documentary...) of samples or contexts."""

    kind = "calendar_date"
    serializer_class = CalendarDateOut  # documents the responses
    input_class = CalendarDateInput
    add = staticmethod(writes.add_calendar_date)
    filters = {"sample": "sample_id", "context": "context_id", "kind": "kind"}
    list, retrieve, create = _own(_EvidenceViewSet.list), _own(_EvidenceViewSet.retrieve), _own(_EvidenceViewSet.create)


class TerminusViewSet(_EvidenceViewSet):
    """Termini post quem and ante quem from datable finds."""

    kind = "terminus"
    serializer_class = TerminusOut  # documents the responses
    input_class = TerminusInput
    add = staticmethod(writes.add_terminus)
    filters = {"context": "context_id", "kind": "kind"}
    list, retrieve, create = _own(_EvidenceViewSet.list), _own(_EvidenceViewSet.retrieve), _own(_EvidenceViewSet.create)


for _cls, _out, _in in ((SampleViewSet, SampleOut, SampleInput), (DeterminationViewSet, DeterminationOut,
                        DeterminationInput), (CalendarDateViewSet, CalendarDateOut, CalendarDateInput),
                        (TerminusViewSet, TerminusOut, TerminusInput)):
    _documented(_out, _in)(_cls)


class CalibrateView(ProjectScopedMixin, APIView):
    """Calibrate stored determinations (by id) and ad-hoc values ``{cra, error, curve}`` at once."""

    read_role = Role.VIEWER
    write_role = Role.VIEWER  # a calibration reads; it writes nothing

    throttle_scope = "heavy"

    @extend_schema(request=CalibrateInput, responses={200: OpenApiTypes.OBJECT, 202: JobOut})
    def post(self, request, project=None):
        """Up to the inline limit the answer comes at once; a larger request answers 202 with its job."""
        data = CalibrateInput(data=request.data)
        data.is_valid(raise_exception=True)
        params = {**data.validated_data, "values": [dict(v) for v in data.validated_data["values"]]}
        project_obj = self.get_project()
        revision, found = calibrate_request.measurements(project_obj, params)
        if calibrate_request.needs_job(found):
            job = submit_calibration(project_obj, request.user, revision, params)
            body = JobOut(job, context={"request": request, "project_ref": self.kwargs["project"]}).data
            return Response(body, status=status.HTTP_202_ACCEPTED, headers={"Location": body["url"]})
        return Response(calibrate_request.answer(revision, found, params))


class CurveViewSet(DescribedInputMixin, viewsets.GenericViewSet):
    """Calibration curves visible to the caller: global ones and their organisations'."""

    parser_classes = [BoundedJSONParser, MultiPartParser, FormParser]
    lookup_value_regex = r"\d+"
    input_serializers = {"create": CurveImportInput}

    @property
    def throttle_scope(self):
        return "heavy" if getattr(self, "action", None) == "create" else None

    def get_queryset(self):
        return Curve.objects.visible_to(self.request.user).select_related("table", "organisation").order_by("name", "id")

    def get_object(self):
        curve = self.get_queryset().filter(pk=self.kwargs["pk"]).first()
        if curve is None:
            raise exceptions.NotFound(f"no curve {self.kwargs['pk']}")
        return curve

    @extend_schema(responses=CurveOut(many=True))
    def list(self, request):
        page = self.paginate_queryset(self.get_queryset())
        return self.get_paginated_response([curve_summary(c) for c in page])

    @extend_schema(responses=CurveOut)
    def retrieve(self, request, pk=None):
        return Response(curve_summary(self.get_object()))

    @extend_schema(responses={(200, "text/csv"): OpenApiTypes.STR})
    @action(detail=True, methods=["get"])
    def table(self, request, pk=None):
        """The stored rows as a comma-separated table that imports back to the same checksum."""
        text = curve_to_csv(engine_curve(self.get_object()))
        return HttpResponse(text, content_type="text/csv; charset=utf-8")

    def _organisation(self, slug):
        if slug in (None, ""):
            return None
        visible = Organisation.objects.all()
        if not self.request.user.is_superuser:
            visible = visible.filter(memberships__user=self.request.user)
        org = visible.filter(slug=slug).first()
        if org is None:
            raise RecordInvalid(f"no organisation {slug!r} of yours", field="organisation",
                                code="unknown-organisation")
        return org

    @extend_schema(request={"application/json": CurveImportInput, "multipart/form-data": CurveImportInput},
                   responses={201: CurveOut, 200: CurveOut})
    @idempotent
    def create(self, request):
        """Import a curve from its table text (``table``) or an uploaded file (``file``)."""
        data = CurveImportInput(data=request.data)
        data.is_valid(raise_exception=True)
        body = data.validated_data
        organisation = self._organisation(body["organisation"])
        if not may_import(request.user, organisation):
            who = "an administrator" if organisation is None else "a manager of the organisation"
            raise ApiError(403, "permission-denied", f"only {who} may import this curve", field="organisation")
        text = body["table"]
        if body["file"] is not None:
            try:
                text = body["file"].read().decode("utf-8")
            except UnicodeDecodeError:
                raise RecordInvalid("the file is not UTF-8 text", field="file", code="invalid-encoding") from None
        curve, created = import_curve(text, name=body["name"], citation=body["citation"], licence=body["licence"],
                                      organisation=organisation, max_step=body["max_step"], user=request.user)
        return Response(curve_summary(curve), status=status.HTTP_201_CREATED if created else status.HTTP_200_OK)
