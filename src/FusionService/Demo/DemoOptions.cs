using System.ComponentModel.DataAnnotations;
using FusionService.Simulator.Feeding;

namespace FusionService.Demo;

/// <summary>Options of the demo fleet that <c>demo</c> mode feeds into the running service (section "Demo").</summary>
public sealed class DemoOptions
{
    /// <summary>Configuration section.</summary>
    public const string Section = "Demo";

    /// <summary>Whether the demo fleet runs; the <c>demo</c> command sets it. Default false.</summary>
    public bool Enabled { get; set; }

    /// <summary>Fleet name the demo keys belong to.</summary>
    [Required]
    public string FleetName { get; set; } = "brackenholt-demo";

    /// <summary>Number of vans, 8 to 20. Default 12.</summary>
    [Range(8, 20)]
    public int Vans { get; set; } = 12;

    /// <summary>
    /// How much faster than real time the vans' day is played, 1 to 60. Default 1 (live). Above 1 the day is placed in the
    /// past so that no measurement is ever in the future.
    /// </summary>
    [Range(1.0, 60.0)]
    public double Acceleration { get; set; } = 1.0;

    /// <summary>
    /// At 1x, how many minutes of the vans' day lie before the start, 0 to 60: they are uploaded at once as a backlog and
    /// the rest live, so that the first vans are already out on their rounds when the dashboard opens (vans leave the
    /// depot a minute apart). Ignored above 1x. Default 10.
    /// </summary>
    [Range(0.0, 60.0)]
    public double HeadStartMinutes { get; set; } = 10;

    /// <summary>How the trackers upload: Http, WebSocket or Mixed (alternate vans). Default Mixed.</summary>
    public FeedTransport Transport { get; set; } = FeedTransport.Mixed;

    /// <summary>Seed of the invented scenario. Default 20261202.</summary>
    public int Seed { get; set; } = 20261202;

    /// <summary>Seconds between progress lines. Default 10.</summary>
    [Range(1, 3600)]
    public int ProgressIntervalS { get; set; } = 10;
}
