// Waiting for a service started as a separate OS process to answer its readiness probe.
using System.Diagnostics;

namespace FusionService.Tests.Infrastructure;

/// <summary>Readiness of a service running as its own process (the crash-restart and cluster tests start real ones).</summary>
internal static class ServiceProcessReadiness
{
    /// <summary>
    /// Polls <c>/health/ready</c> through <paramref name="client"/> every 200 ms until it answers 2xx; fails when
    /// <paramref name="service"/> exits first or 60 s pass.
    /// </summary>
    public static async Task WaitUntilReadyAsync(HttpClient client, Process service)
    {
        var deadline = DateTime.UtcNow.AddSeconds(60);
        while (DateTime.UtcNow < deadline)
        {
            Assert.False(service.HasExited, "the service process exited during start-up");
            try
            {
                using var response = await client.GetAsync("/health/ready");
                if (response.IsSuccessStatusCode)
                {
                    return;
                }
            }
            catch (HttpRequestException)
            {
                // Not listening yet.
            }

            await Task.Delay(200);
        }

        Assert.Fail("the service process did not become ready within 60 s");
    }
}
