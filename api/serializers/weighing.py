"""Shapes of weighing and sensitivity-run input (the domain checks the values)."""

from __future__ import annotations

from rest_framework import serializers


class WeighingInput(serializers.Serializer):
    versions = serializers.ListField(child=serializers.IntegerField(), required=False, allow_null=True, default=None,
                                     help_text="Ids of 2 or more committed versions of this project that use the "
                                               "same dating evidence.")
    version = serializers.IntegerField(required=False, allow_null=True, default=None,
                                       help_text="With alternatives: true, weigh the 2^k ways of deciding the items "
                                                 "this version leaves undecided: one by one for k <= 4, jointly "
                                                 "beyond (up to 10 uncertain relationships and 4 equalities).")
    alternatives = serializers.BooleanField(required=False, default=False)
    method = serializers.ChoiceField(choices=("auto", "one-by-one", "joint"), required=False, default="auto",
                                     help_text="How alternatives are weighed: auto (one by one up to 4 items, "
                                               "jointly beyond), one-by-one, or joint (the uncertain "
                                               "relationships from one encompassing model).")
    settings = serializers.DictField(required=False, default=dict,
                                     help_text="Stepping-stone settings: stones, draws, thin, warmup, repeats; for "
                                               "joint weighing also joint_chains, joint_iterations, joint_warmup.")
    seed = serializers.IntegerField(required=False, allow_null=True, default=None, min_value=0)

    def validate(self, data):
        if data.get("versions") is not None and data.get("version") is not None:
            raise serializers.ValidationError({"versions": "give either versions or version, not both"})
        if data.get("version") is not None and not data.get("alternatives"):
            raise serializers.ValidationError({"alternatives": "with one version, set alternatives: true"})
        if data.get("versions") is not None and data.get("method", "auto") != "auto":
            raise serializers.ValidationError({"method": "method applies to the alternatives of one version"})
        if data.get("versions") is None and data.get("version") is None:
            raise serializers.ValidationError({"versions": "give versions (a list of ids) or version with "
                                                           "alternatives: true"})
        return data


class SensitivityInput(serializers.Serializer):
    version = serializers.IntegerField(help_text="Id of a committed interpretation version of this project.")
    variations = serializers.ListField(child=serializers.JSONField(), min_length=1,
                                       help_text="Each a JSON object changing one or more of curve, delta_r, "
                                                 "outlier_prior, range, arrangement.")
    settings = serializers.DictField(required=False, default=dict,
                                     help_text="Sampling settings: chains, iterations, warmup.")
    seed = serializers.IntegerField(required=False, allow_null=True, default=None, min_value=0)
