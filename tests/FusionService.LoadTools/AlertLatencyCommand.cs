// `alert-latency --url URL --ingest-key KEY --admin-key KEY [--samples 5]`: measures accepted telemetry -> webhook received.
using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Sockets;
using System.Text;
using System.Text.Json.Nodes;

namespace FusionService.LoadTools;

/// <summary>
/// The <c>alert-latency</c> command (a measuring tool, not a test): registers a webhook on a local listener, then for each
/// sample drives a new vehicle straight east at 10 m/s for 40 s (invented data) and posts three fixes jumped 150 m north
/// in one request. The track gates them, a <c>gated_burst</c> alert opens and is delivered; the command reports the time
/// from the 2xx answer of that request (the fixes are committed) to the webhook's arrival, with min, median and max.
/// It deletes its webhook at the end.
/// </summary>
public static class AlertLatencyCommand
{
    /// <summary>Usage text.</summary>
    public const string Usage = "usage: alert-latency --url http://127.0.0.1:5080 --ingest-key KEY --admin-key KEY [--samples 5]";

    /// <summary>True when <paramref name="args"/> ask for this command.</summary>
    public static bool Matches(string[] args) => args is ["alert-latency", ..];

    /// <summary>Runs the measurement and prints one line per sample and a summary.</summary>
    /// <returns>0, 2 for bad arguments or a refused webhook registration, 1 when a webhook did not arrive within 60 s.</returns>
    public static async Task<int> RunAsync(string[] args, TextWriter output, TextWriter error, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(args);
        ArgumentNullException.ThrowIfNull(output);
        ArgumentNullException.ThrowIfNull(error);
        var values = new Dictionary<string, string>(StringComparer.Ordinal);
        for (int i = 1; i + 1 < args.Length; i += 2)
        {
            values[args[i].TrimStart('-')] = args[i + 1];
        }

        if (!values.TryGetValue("url", out var url) || !Uri.TryCreate(url, UriKind.Absolute, out var baseUrl)
            || !values.TryGetValue("ingest-key", out var ingestKey) || !values.TryGetValue("admin-key", out var adminKey))
        {
            await error.WriteLineAsync(Usage).ConfigureAwait(false);
            return 2;
        }

        int samples = values.TryGetValue("samples", out var s) ? int.Parse(s, CultureInfo.InvariantCulture) : 5;
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        int port = ((IPEndPoint)listener.LocalEndpoint).Port;
        listener.Stop();
        string hookUrl = "http://127.0.0.1:" + port.ToString(CultureInfo.InvariantCulture) + "/latency/";
        using var http = new HttpListener();
        http.Prefixes.Add(hookUrl);
        http.Start();
        var arrivals = new System.Collections.Concurrent.ConcurrentDictionary<string, long>(StringComparer.Ordinal);
        var receiving = Task.Run(
            async () =>
            {
                while (http.IsListening)
                {
                    HttpListenerContext context;
                    try
                    {
                        context = await http.GetContextAsync().ConfigureAwait(false);
                    }
                    catch (HttpListenerException)
                    {
                        return;
                    }
                    catch (ObjectDisposedException)
                    {
                        return;
                    }

                    long at = Stopwatch.GetTimestamp();
                    using var reader = new StreamReader(context.Request.InputStream, Encoding.UTF8);
                    var body = JsonNode.Parse(await reader.ReadToEndAsync(cancellationToken).ConfigureAwait(false));
                    if ((string?)body?["kind"] == "gated_burst" && (string?)body["vehicle"] is { } vehicle)
                    {
                        arrivals.TryAdd(vehicle, at);
                    }

                    context.Response.StatusCode = 200;
                    context.Response.Close();
                }
            },
            cancellationToken);

        using var client = new HttpClient { BaseAddress = baseUrl };
        using var admin = new HttpRequestMessage(HttpMethod.Post, "v1/webhooks")
        {
            Content = new StringContent(new JsonObject { ["url"] = hookUrl, ["secret"] = "latency-measurement-secret" }.ToJsonString(), Encoding.UTF8, "application/json"),
        };
        admin.Headers.Authorization = new AuthenticationHeaderValue("Bearer", adminKey);
        using var created = await client.SendAsync(admin, cancellationToken).ConfigureAwait(false);
        string createdBody = await created.Content.ReadAsStringAsync(cancellationToken).ConfigureAwait(false);
        if (!created.IsSuccessStatusCode)
        {
            // The service refuses a plain-http loopback receiver unless started with Webhooks:AllowHttp and
            // Webhooks:AllowedNetworks containing 127.0.0.0/8.
            await error.WriteLineAsync("the webhook was not registered (HTTP " + ((int)created.StatusCode).ToString(CultureInfo.InvariantCulture) + "): " + createdBody
                + "; start the service with Webhooks__AllowHttp=true Webhooks__AllowedNetworks__0=127.0.0.0/8").ConfigureAwait(false);
            return 2;
        }

        string webhookId = (string)JsonNode.Parse(createdBody)!["id"]!;
        var latenciesMs = new List<double>();
        int exit = 0;
        try
        {
            for (int k = 0; k < samples; k++)
            {
                string vehicle = "latency-" + DateTimeOffset.UtcNow.ToUnixTimeMilliseconds().ToString(CultureInfo.InvariantCulture) + "-" + k.ToString(CultureInfo.InvariantCulture);
                long startMs = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() - 120_000;
                await PostAsync(client, ingestKey, Drive(vehicle, startMs), cancellationToken).ConfigureAwait(false);
                var jumps = new JsonArray();
                foreach (int second in new[] { 41, 43, 45 })
                {
                    jumps.Add(Fix(vehicle, startMs + (second * 1000L), second, 150.0));
                }

                await PostAsync(client, ingestKey, jumps, cancellationToken).ConfigureAwait(false);
                long acknowledged = Stopwatch.GetTimestamp();
                var deadline = DateTime.UtcNow.AddSeconds(60);
                while (!arrivals.ContainsKey(vehicle) && DateTime.UtcNow < deadline)
                {
                    await Task.Delay(5, cancellationToken).ConfigureAwait(false);
                }

                if (!arrivals.TryGetValue(vehicle, out long at))
                {
                    await output.WriteLineAsync($"sample {k + 1}: no webhook within 60 s").ConfigureAwait(false);
                    exit = 1;
                    continue;
                }

                double ms = Stopwatch.GetElapsedTime(acknowledged, at).TotalMilliseconds;
                latenciesMs.Add(ms);
                await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture, $"sample {k + 1}: {ms:0.0} ms from the ingest acknowledgement to the webhook")).ConfigureAwait(false);
            }
        }
        finally
        {
            using var delete = new HttpRequestMessage(HttpMethod.Delete, "v1/webhooks/" + webhookId);
            delete.Headers.Authorization = new AuthenticationHeaderValue("Bearer", adminKey);
            using var deleted = await client.SendAsync(delete, CancellationToken.None).ConfigureAwait(false);
            http.Stop();
            await receiving.ConfigureAwait(false);
        }

        if (latenciesMs.Count > 0)
        {
            latenciesMs.Sort();
            await output.WriteLineAsync(string.Create(CultureInfo.InvariantCulture,
                $"{latenciesMs.Count} samples: min {latenciesMs[0]:0.0} ms, median {latenciesMs[latenciesMs.Count / 2]:0.0} ms, max {latenciesMs[^1]:0.0} ms")).ConfigureAwait(false);
        }

        return exit;
    }

    private static JsonArray Drive(string vehicle, long startMs)
    {
        var messages = new JsonArray();
        for (int second = 0; second <= 40; second++)
        {
            messages.Add(Fix(vehicle, startMs + (second * 1000L), second, 0));
            for (int tenth = 1; tenth < 10 && second < 40; tenth++)
            {
                long t = startMs + (second * 1000L) + (tenth * 100L);
                messages.Add(new JsonObject { ["vehicle"] = vehicle, ["kind"] = "wheel", ["time"] = t, ["id"] = "w" + t.ToString(CultureInfo.InvariantCulture), ["speed_mps"] = 10.0 });
                messages.Add(new JsonObject { ["vehicle"] = vehicle, ["kind"] = "imu", ["time"] = t, ["id"] = "i" + t.ToString(CultureInfo.InvariantCulture), ["yaw_rate_dps"] = 0.0, ["accel_mps2"] = 0.0 });
            }
        }

        return messages;
    }

    // A fix on the straight eastward line 46.12 N, 170.47 E at 10 m/s, shifted north by northM (invented, on open sea like the demo town).
    private static JsonObject Fix(string vehicle, long timeMs, int second, double northM) => new()
    {
        ["vehicle"] = vehicle,
        ["kind"] = "gnss",
        ["time"] = timeMs,
        ["id"] = "g" + timeMs.ToString(CultureInfo.InvariantCulture),
        ["lat_deg"] = 46.12 + (northM / 111_132.0),
        ["lon_deg"] = 170.47 + (second * 10.0 / 77_200.0),
        ["accuracy_m"] = 3.0,
        ["speed_mps"] = 10.0,
        ["course_deg"] = 90.0,
    };

    private static async Task PostAsync(HttpClient client, string key, JsonArray messages, CancellationToken cancellationToken)
    {
        using var request = new HttpRequestMessage(HttpMethod.Post, "v1/telemetry") { Content = new StringContent(messages.ToJsonString(), Encoding.UTF8, "application/json") };
        request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", key);
        using var response = await client.SendAsync(request, cancellationToken).ConfigureAwait(false);
        response.EnsureSuccessStatusCode();
    }
}
