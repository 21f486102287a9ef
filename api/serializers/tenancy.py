from rest_framework import serializers

from projects.models import ApiToken, Organisation, Project


class OrganisationOut(serializers.ModelSerializer):
    role = serializers.SerializerMethodField()

    class Meta:
        model = Organisation
        fields = ["slug", "name", "role"]

    def get_role(self, org) -> str | None:
        user = self.context["request"].user
        return org.memberships.filter(user=user).values_list("role", flat=True).first()


class ProjectOut(serializers.ModelSerializer):
    organisation = serializers.CharField(source="organisation.slug")
    role = serializers.SerializerMethodField()

    class Meta:
        model = Project
        fields = ["code", "name", "description", "organisation", "revision", "created_at", "role"]

    def get_role(self, project) -> str | None:
        return project.role_of(self.context["request"].user)


class ProjectInput(serializers.Serializer):
    organisation = serializers.SlugField()
    code = serializers.RegexField(r"^[A-Za-z0-9][A-Za-z0-9_-]{0,31}$")
    name = serializers.CharField(max_length=200)
    description = serializers.CharField(required=False, allow_blank=True, default="")


class TokenOut(serializers.ModelSerializer):
    class Meta:
        model = ApiToken
        fields = ["id", "name", "prefix", "created_at", "last_used_at", "revoked_at"]


class TokenInput(serializers.Serializer):
    name = serializers.CharField(max_length=100)


class TokenCreated(TokenOut):
    key = serializers.CharField(help_text="Shown only once.")

    class Meta(TokenOut.Meta):
        fields = TokenOut.Meta.fields + ["key"]
