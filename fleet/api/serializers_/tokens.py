"""What a phone sends to sign in, and what it gets back."""

from __future__ import annotations

from rest_framework import serializers


class TokenRequestSerializer(serializers.Serializer):
    username = serializers.CharField(max_length=150)
    password = serializers.CharField(max_length=128, style={"input_type": "password"})


class TokenSerializer(serializers.Serializer):
    token = serializers.CharField()
    username = serializers.CharField()
    role = serializers.CharField()
