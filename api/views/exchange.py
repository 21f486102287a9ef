"""A project's package out (directly, or through a job for a large project) and back in.

``GET package/`` answers a small project's package at once; for a large one
it answers 202 with an export job to poll at ``jobs/{id}/``, and the file is
then at ``package/files/{job}/``.  ``POST package/`` (managers) takes a
package as the multipart field ``file`` and replays it into this project,
which must be empty; a refused package is a 400 listing every problem
(table, row, field, reason) and nothing is written.
"""

from __future__ import annotations

import json
import tempfile

from django.http import FileResponse, HttpResponse, JsonResponse
from drf_spectacular.types import OpenApiTypes
from drf_spectacular.utils import OpenApiParameter, extend_schema
from rest_framework import status
from rest_framework.parsers import MultiPartParser
from rest_framework.response import Response
from rest_framework.views import APIView

from api.actor import actor_for
from api.errors import ApiError
from api.serializers.interpretations import JobOut
from api.views.base import ProjectScopedMixin, truthy
from chronology.models import Job
from exchange import linked_data, package_jobs
from exchange.package.writer import write_package
from exchange.registers import plan
from exchange.registers.reading import MAX_BYTES
from exchange.replay import import_package
from exchange.tasks import start_export
from projects.models import Role

BACKGROUND = OpenApiParameter("background", OpenApiTypes.BOOL,
                              description="Write the package in a job even for a small project.")


def _zip_response(handle, filename: str, descriptor: dict) -> FileResponse:
    response = FileResponse(handle, content_type="application/zip", as_attachment=True, filename=filename)
    response["X-Record-Head-Digest"] = descriptor.get("head_digest") or descriptor.get("tellstack:head_digest", "")
    response["X-Record-Revision"] = str(descriptor.get("revision", descriptor.get("tellstack:revision", "")))
    return response


class PackageView(ProjectScopedMixin, APIView):
    """The project package: GET exports (200 zip, or 202 with a job), POST imports into an empty project."""

    read_role = Role.VIEWER
    write_role = Role.MANAGER
    parser_classes = [MultiPartParser]

    @extend_schema(parameters=[BACKGROUND],
                   responses={(200, "application/zip"): OpenApiTypes.BINARY, 202: JobOut})
    def get(self, request, project):
        found = self.get_project()
        if truthy(request.query_params.get("background", "false")) or not package_jobs.is_small(found):
            job = start_export(found, request.user)
            body = JobOut(job, context={"request": request, "project_ref": project}).data
            body["file_url"] = f"/api/v1/projects/{project}/package/files/{job.pk}/"
            return Response(body, status=status.HTTP_202_ACCEPTED, headers={"Location": body["url"]})
        handle = tempfile.TemporaryFile()  # closed, and so removed, once the response is sent
        descriptor = write_package(found, handle)
        handle.seek(0)
        return _zip_response(handle, package_jobs.file_name(found, descriptor["tellstack:revision"]), descriptor)

    @extend_schema(request={"multipart/form-data": {"type": "object", "properties": {
        "file": {"type": "string", "format": "binary"}}}}, responses={201: OpenApiTypes.OBJECT})
    def post(self, request, project):
        found = self.get_project()
        upload = request.FILES.get("file")
        if upload is None:
            raise ApiError(400, "required", "send the package as the multipart field 'file'", field="file")
        done = import_package(upload, found, request.user)
        return Response({
            "project": found.code, "revision": done.revisions, "source_project": done.source_project,
            "source_head_digest": done.source_head_digest, "package_sha256": done.package_sha256,
            "imported_by": request.user.username, "imported_at": done.imported_at,
            "unknown_actors": done.unknown_actors,
        }, status=status.HTTP_201_CREATED)


class PackageFileView(ProjectScopedMixin, APIView):
    """The package an export job wrote (409 while the job has not finished)."""

    read_role = Role.VIEWER

    @extend_schema(responses={(200, "application/zip"): OpenApiTypes.BINARY})
    def get(self, request, project, job):
        found = self.get_project()
        row = Job.objects.filter(project=found, pk=job, kind=package_jobs.JOB_KIND).first()
        if row is None:
            raise ApiError(404, "not-found", f"no package export job {job} in this project", field="job")
        path = package_jobs.job_file(row)
        if path is None:
            raise ApiError(409, "job-not-done", f"the export job is {row.state}; the file exists once it is done",
                           field="job", state=row.state)
        return _zip_response(path.open("rb"), path.name, row.result)


class RegisterImportView(ProjectScopedMixin, APIView):
    """A legacy context register (CSV or XLSX) in: a dry run by default, then an all-or-nothing commit.

    Multipart fields: ``file``; ``mapping`` (optional JSON object of our
    field names to the file's column headers); ``dry_run`` (default true).
    The dry run answers 200 with every refused row and every contradiction
    with the cycle it would close; ``dry_run=false`` writes the register as
    one record revision (201), or nothing (409 listing every problem).
    """

    write_role = Role.RECORDER
    parser_classes = [MultiPartParser]

    @extend_schema(request={"multipart/form-data": {"type": "object", "properties": {
        "file": {"type": "string", "format": "binary"}, "mapping": {"type": "string"},
        "dry_run": {"type": "boolean"}}}}, responses={200: OpenApiTypes.OBJECT, 201: OpenApiTypes.OBJECT})
    def post(self, request, project):
        found = self.get_project()
        upload = request.FILES.get("file")
        if upload is None:
            raise ApiError(400, "required", "send the register as the multipart field 'file'", field="file")
        mapping = request.data.get("mapping") or None
        if mapping is not None:
            try:
                mapping = json.loads(mapping)
            except ValueError:
                raise ApiError(400, "invalid-json", "mapping is a JSON object", field="mapping") from None
            if not isinstance(mapping, dict) or not all(isinstance(v, str) for v in mapping.values()):
                raise ApiError(400, "invalid", 'mapping is a JSON object of field names to column headers, such as '
                               '{"label": "Context no."}', field="mapping")
        if upload.size > MAX_BYTES:
            raise ApiError(413, "too-large", f"a register is at most {MAX_BYTES} bytes", field="file", limit=MAX_BYTES)
        data = upload.read()
        if truthy(request.data.get("dry_run", "true")):
            return Response(plan.dry_run(found, data, upload.name, mapping))
        report = plan.commit(found, actor_for(request), data, upload.name, mapping)
        return Response(report, status=status.HTTP_201_CREATED if report["revision"] else status.HTTP_200_OK)


class LinkedDataView(ProjectScopedMixin, APIView):
    """The record as JSON-LD: CIDOC CRM and CRMarchaeo for the record, PROV-O for its provenance and runs."""

    @extend_schema(responses={(200, "application/ld+json"): OpenApiTypes.OBJECT})
    def get(self, request, project):
        found = self.get_project()
        base = request.build_absolute_uri(f"/api/v1/projects/{found.organisation.slug}:{found.code}/")
        body = linked_data.to_jsonld(found, base, request.build_absolute_uri("/api/v1/schemas/linked-data-context/"))
        response = HttpResponse(body, content_type="application/ld+json")
        response["X-Record-Head-Digest"] = found.head_digest or ""
        return response


def linked_data_context(request):
    """The published JSON-LD ``@context`` of the record's linked data."""
    return JsonResponse(linked_data.published_context(), content_type="application/ld+json")
